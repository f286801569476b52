/**
 * The denoising step of `clean` over worker threads: the prepared planes go into shared memory, one worker
 * (src-main/node/workers/clean.ts) per band of rows writes its band of the output, and the bands' statistics
 * are merged. With 0 workers, or for the tile method, the work stays on this thread.
 */
import { existsSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import { CancelledError, fromErrorPayload, RankfoldError, type toErrorPayload } from '../../contract';
import {
  type DenoiseStats,
  denoiseInProcess,
  type GroupParams,
  mergeStats,
  type PreparedClean,
  rowBands,
  withPassThrough,
} from '../../engine/clean';

/** What one clean worker is started with. */
export interface CleanWorkerData {
  width: number;
  height: number;
  /** SharedArrayBuffers holding the Float32 input planes (gray, or Y Cb Cr). */
  input: SharedArrayBuffer[];
  /** SharedArrayBuffers for the Float32 output planes; this worker writes rows [rowStart, rowEnd). */
  output: SharedArrayBuffer[];
  sigmas: number[];
  params: GroupParams;
  rowStart: number;
  rowEnd: number;
}

export type CleanWorkerMessage =
  | { type: 'progress'; fraction: number }
  | {
      type: 'done';
      stats: { groups: number; rankSum: number; rankMin: number; rankMax: number; exact: number };
    }
  | { type: 'error'; error: ReturnType<typeof toErrorPayload> };

/** Where the built worker lives: beside the running bundle (dist/cli.js) or, from sources, in dist/. */
function cleanWorkerFile(): string {
  const here = dirname(fileURLToPath(import.meta.url));
  const candidates = [
    join(here, 'workers', 'clean.js'),
    join(here, '..', 'workers', 'clean.js'),
    resolve(here, '..', '..', '..', 'dist', 'workers', 'clean.js'),
  ];
  const found = candidates.find((c) => existsSync(c));
  if (!found)
    throw new RankfoldError(
      'the clean worker (dist/workers/clean.js) is missing; run `npm run build` in the Rankfold folder, or pass workers: 0',
    );
  return found;
}

/** Denoise the prepared planes with `workers` threads over row bands (0 = this thread). */
export async function denoiseInBands(
  prep: PreparedClean,
  workers: number,
  hooks: { signal?: AbortSignal; onProgress?: (stage: 'denoise', fraction: number) => void },
): Promise<{ planes: Float32Array[]; stats: DenoiseStats }> {
  const report = (f: number) => hooks.onProgress?.('denoise', f);
  if (workers === 0 || prep.method === 'tiles') {
    if (hooks.signal?.aborted) throw new CancelledError('cleaning');
    return denoiseInProcess(prep, 1, report);
  }
  const { width, height } = prep;
  const n = width * height;
  const planes = prep.active.map((c) => prep.work[c]);
  const input = planes.map((p) => {
    const b = new SharedArrayBuffer(n * 4);
    new Float32Array(b).set(p);
    return b;
  });
  const output = planes.map(() => new SharedArrayBuffer(n * 4));
  const file = cleanWorkerFile();
  const bands = rowBands(height, workers);
  const fractions = bands.map(() => 0);
  const running: Worker[] = [];
  const stop = () => {
    for (const w of running) void w.terminate();
  };
  try {
    const stats = await Promise.all(
      bands.map(
        ([rowStart, rowEnd], i) =>
          new Promise<DenoiseStats>((resolveBand, rejectBand) => {
            if (hooks.signal?.aborted) return rejectBand(new CancelledError('cleaning'));
            const workerData: CleanWorkerData = {
              width,
              height,
              input,
              output,
              sigmas: prep.active.map((c) => prep.sigmas[c]),
              params: prep.params!,
              rowStart,
              rowEnd,
            };
            const w = new Worker(file, { workerData });
            running.push(w);
            let settled = false;
            const onAbort = () => {
              settled = true;
              void w.terminate();
              rejectBand(new CancelledError('cleaning'));
            };
            hooks.signal?.addEventListener('abort', onAbort, { once: true });
            w.on('message', (m: CleanWorkerMessage) => {
              if (m.type === 'progress') {
                fractions[i] = m.fraction;
                report(fractions.reduce((a, b) => a + b, 0) / bands.length);
              } else if (m.type === 'done') {
                settled = true;
                hooks.signal?.removeEventListener('abort', onAbort);
                void w.terminate();
                resolveBand(m.stats);
              } else {
                settled = true;
                hooks.signal?.removeEventListener('abort', onAbort);
                void w.terminate();
                rejectBand(fromErrorPayload(m.error));
              }
            });
            w.on('error', (err) => {
              if (settled) return;
              settled = true;
              rejectBand(new RankfoldError(`the clean worker failed: ${err.message}`));
            });
            w.on('exit', (code) => {
              if (!settled) {
                settled = true;
                rejectBand(new RankfoldError(`the clean worker stopped unexpectedly (exit code ${code})`));
              }
            });
          }),
      ),
    );
    return {
      planes: withPassThrough(
        prep,
        output.map((b) => new Float32Array(b)),
      ),
      stats: mergeStats(stats),
    };
  } catch (err) {
    stop();
    throw err;
  }
}
