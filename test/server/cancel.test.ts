/**
 * Long jobs run in worker threads and can be cancelled: the job rejects with CancelledError (the one
 * error class for stopped jobs, src-main/contract/errors.ts), progress events arrive while it runs,
 * and the scan stays usable afterwards: the next job runs in a fresh thread that adopts the planes the
 * first thread decoded (shared memory), without reading the file again.
 */
import { copyFileSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { ProgressEvent, ScanSummary } from '../../src-main/contract';
import { Backend } from '../../src-main/node/server/backend';
import { repoRoot } from '../helpers/fixtures';
import { noisePng } from './harness';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-cancel-'));
const backend = new Backend({ workersDir: join(repoRoot, 'dist', 'workers'), samplesDir: dir });
afterAll(() => backend.close());

describe('cancel', () => {
  it('stops a running factorisation, then the scan still answers', async () => {
    const w = 1600;
    const h = 1200;
    await noisePng(join(dir, 'noise.png'), w, h, 12345);
    const events: ProgressEvent[] = [];
    backend.on('progress', (e: ProgressEvent) => events.push(e));
    const scan = (await backend.call('openScan', {
      source: { kind: 'sample', name: 'noise.png' },
    })) as ScanSummary;
    const job = backend.call('factors', { scanId: scan.scanId, maxRank: 600, job: 'long1' });
    await new Promise((r) => setTimeout(r, 300));
    await backend.call('cancel', 'long1');
    await expect(job).rejects.toThrow('the job was cancelled');
    expect(events.some((e) => e.job === 'long1')).toBe(true);
    const again = (await backend.call('factors', {
      scanId: scan.scanId,
      maxRank: 4,
      job: 'short1',
    })) as ArrayBuffer;
    expect(again.byteLength).toBeGreaterThan(w * h);
  });

  it('after a cancel, the next thread and the background factorisation work without the file', async () => {
    copyFileSync(join(dir, 'noise.png'), join(dir, 'gone.png'));
    const scan = (await backend.call('openScan', {
      source: { kind: 'sample', name: 'gone.png' },
    })) as ScanSummary;
    rmSync(join(dir, 'gone.png'));
    const job = backend.call('factors', { scanId: scan.scanId, maxRank: 600, job: 'long2' });
    await new Promise((r) => setTimeout(r, 300));
    await backend.call('cancel', 'long2');
    await expect(job).rejects.toThrow('the job was cancelled');
    // Had either thread decoded the scan again, it would have failed: the file no longer exists.
    const [fg, bg] = (await Promise.all([
      backend.call('factors', { scanId: scan.scanId, maxRank: 4, job: 'short2' }),
      backend.call('factors', { scanId: scan.scanId, maxRank: 5, job: 'short3', background: true }),
    ])) as ArrayBuffer[];
    expect(fg.byteLength).toBeGreaterThan(scan.width * scan.height);
    expect(bg.byteLength).toBeGreaterThan(fg.byteLength);
  });
});
