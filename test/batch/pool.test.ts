// The batch worker pool contains failures to the one job: a thrown error, an uncaught exception, an exit
// and an endless loop (stopped by the per-file timeout) each fail that job, and the other jobs finish.
// Worker semantics per Node.js 20 worker_threads docs ('error' and 'exit' events, worker.terminate()).
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { adviceOf, type ErrorPayload } from '../../src-main/contract';
import { WorkerPool } from '../../src-main/node/batch/pool';

const workerFile = fileURLToPath(new URL('./fixtures/pool-worker.mjs', import.meta.url));
type Job = { mode: string; value?: number };

describe('WorkerPool', () => {
  it('runs every job once and forwards progress', async () => {
    const pool = new WorkerPool<Job, { value: number }>(workerFile, 2);
    const progress: unknown[] = [];
    const out = await Promise.all(
      [1, 2, 3, 4, 5].map((v) => pool.run({ mode: 'ok', value: v }, { onProgress: (p) => progress.push(p) })),
    );
    await pool.close();
    expect(out.map((o) => (o.ok ? o.value.value : -1))).toEqual([1, 2, 3, 4, 5]);
    expect(progress).toHaveLength(5);
  });

  it('contains an error, a crash, an exit and a hang to their own jobs', async () => {
    const pool = new WorkerPool<Job, { value: number }>(workerFile, 2);
    const modes = ['ok', 'throw', 'crash', 'ok', 'exit', 'hang', 'ok'];
    const out = await Promise.all(
      modes.map((mode, i) =>
        pool.run({ mode, value: i }, { timeoutMs: mode === 'hang' ? 400 : 0, label: `file${i}.png` }),
      ),
    );
    await pool.close();
    const names = out.map((o) => (o.ok ? 'ok' : o.error.name));
    expect(names).toEqual(['ok', 'InputError', 'WorkerCrash', 'ok', 'WorkerCrash', 'TimeoutError', 'ok']);
    const msg = (i: number) => (out[i].ok ? '' : (out[i] as { error: { message: string } }).error.message);
    expect(msg(2)).toContain('file2.png: the worker stopped unexpectedly');
    expect(msg(2)).toContain('boom in worker');
    expect(msg(4)).toContain('exited with code 3');
    expect(msg(5)).toBe(
      'file5.png: took longer than the per-file limit of 0.4 s and was stopped; raise it with --timeout',
    );
    // The app's wording drops the CLI flag (the hint names what to do instead).
    const timedOut = out[5] as { ok: false; error: ErrorPayload };
    expect(adviceOf(timedOut.error)).toEqual({
      core: 'file5.png: took longer than the per-file limit of 0.4 s and was stopped',
      hint: 'timeout',
    });
  });

  it('close() cancels queued work', async () => {
    const pool = new WorkerPool<Job, { value: number }>(workerFile, 1);
    const a = pool.run({ mode: 'hang' });
    const b = pool.run({ mode: 'ok', value: 1 });
    await new Promise((r) => setTimeout(r, 50));
    await pool.close();
    const [ra, rb] = await Promise.all([a, b]);
    expect(ra.ok || ra.error.name).toBe('CancelledError');
    expect(rb.ok || rb.error.name).toBe('CancelledError');
  });
});
