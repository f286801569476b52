/**
 * A new evaluation of a scan supersedes the one running or queued for it (src-main/node/server/scan-jobs.ts):
 * the older one rejects with CancelledError instead of running to its end first, and the newest one
 * answers with the figures of its own budget.
 */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { EvaluateResult, ProgressEvent, ScanSummary } from '../../src-main/contract';
import { Backend } from '../../src-main/node/server/backend';
import { repoRoot } from '../helpers/fixtures';
import { noisePng } from './harness';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-supersede-'));
const backend = new Backend({ workersDir: join(repoRoot, 'dist', 'workers'), samplesDir: dir });
afterAll(() => backend.close());

describe('superseded evaluations', () => {
  it('a new budget cancels the running evaluation and the one queued behind it', async () => {
    await noisePng(join(dir, 'noise.png'), 800, 600);
    const events: ProgressEvent[] = [];
    backend.on('progress', (e: ProgressEvent) => events.push(e));
    const scan = (await backend.call('openScan', {
      source: { kind: 'sample', name: 'noise.png' },
    })) as ScanSummary;
    const order: string[] = [];
    const track = (job: string, p: Promise<unknown>) =>
      p.then(
        (v) => {
          order.push(`${job} answered`);
          return v as EvaluateResult;
        },
        (e: Error) => {
          order.push(`${job} ${e.name}`);
          throw e;
        },
      );
    const evaluate = (job: string, budget: unknown) =>
      track(job, backend.call('evaluate', { scanId: scan.scanId, budget, tile: 0, job }));
    // A 45-dB floor on noise: a search over nearly every rank, still running when the next budget comes.
    const slow = evaluate('floor45', { kind: 'psnr', db: 45 });
    slow.catch(() => undefined);
    await new Promise<void>((resolve) => {
      const seen = () => events.some((e) => e.job === 'floor45') && resolve();
      backend.on('progress', seen);
    });
    const queued = evaluate('rank8', { kind: 'rank', rank: 8 });
    queued.catch(() => undefined);
    const last = evaluate('rank5', { kind: 'rank', rank: 5 });
    await expect(slow).rejects.toThrow('the job was cancelled');
    await expect(queued).rejects.toThrow('the job was cancelled');
    const r = await last;
    expect(r.report.ranks[0].rank).toBe(5);
    expect(order).toEqual(['floor45 CancelledError', 'rank8 CancelledError', 'rank5 answered']);
    // The queued one never started: the back end reported no progress for it.
    expect(events.some((e) => e.job === 'rank8')).toBe(false);
  });
});
