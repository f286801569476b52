/**
 * libvips' thread pool is process-wide (sharp.concurrency). A batch runs it on the threads its caller asks
 * for while the batch lasts, and gives the process its own setting back when runBatch returns, so decodes
 * that the app runs after a batch from its Batch panel get every libvips thread again.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { runBatch } from '../../src-main/node/batch/run';
import { batchWorkerFile } from '../../src-main/node/batch/worker-path';
import { withLibvipsThreads } from '../../src-main/node/image/libvips-threads';
import { writePage } from './images';

const compress = { budget: { kind: 'bytes' as const, bytes: 4000 }, tile: 'auto' as const };
let dir: string;
const processSetting = sharp.concurrency();

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-vips-threads-'));
  await writePage(join(dir, 'in', 'a.png'), 96, 128, 1);
  await writePage(join(dir, 'in', 'b.png'), 80, 112, 2);
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});
afterEach(() => {
  sharp.concurrency(processSetting);
});

describe('runBatch and the process-wide libvips setting', () => {
  it('holds libvips to the threads asked for while the batch runs, and restores the setting after it', async () => {
    sharp.concurrency(3);
    const seen: number[] = [];
    const r = await runBatch({
      inDir: join(dir, 'in'),
      outDir: join(dir, 'out'),
      compress,
      jobs: 2,
      libvipsThreads: 1,
      workerFile: batchWorkerFile(),
      onEvent: () => seen.push(sharp.concurrency()),
    });
    expect(r.summary.ok).toBe(2);
    expect(new Set(seen)).toEqual(new Set([1]));
    expect(sharp.concurrency()).toBe(3);
  });

  it('restores the setting when the batch fails, and leaves it alone when no setting is asked for', async () => {
    sharp.concurrency(2);
    await expect(
      runBatch({
        inDir: join(dir, 'in'),
        outDir: join(dir, 'dry'),
        compress,
        dryRun: true,
        libvipsThreads: 1,
        workerFile: '',
        onEvent: (e) => {
          if (e.event === 'file') throw new Error('listener failed');
        },
      }),
    ).rejects.toThrow('listener failed');
    expect(sharp.concurrency()).toBe(2);
    let during = 0;
    await runBatch({
      inDir: join(dir, 'in'),
      outDir: join(dir, 'dry'),
      compress,
      dryRun: true,
      workerFile: '',
      onEvent: () => {
        during = sharp.concurrency();
      },
    });
    expect(during).toBe(2);
    expect(sharp.concurrency()).toBe(2);
  });

  it('gives the setting back only when the last of two overlapping holders is done', async () => {
    sharp.concurrency(4);
    let releaseFirst = () => {};
    const first = withLibvipsThreads(1, () => new Promise<void>((done) => (releaseFirst = done)));
    const second = withLibvipsThreads(1, async () => {
      releaseFirst();
      await first;
      expect(sharp.concurrency()).toBe(1);
    });
    await Promise.all([first, second]);
    expect(sharp.concurrency()).toBe(4);
  });
});
