/**
 * The denoising step of `clean` over worker threads: the prepared planes of every level (the full size and,
 * for correlated noise, the coarse levels) go into shared memory, each worker (src-main/node/workers/clean.ts)
 * runs its share of the level jobs (engine/clean/level-jobs.ts) and writes those rows of the outputs, the
 * levels are recomposed here and the full-size bands' statistics merged. With 0 workers, or for the tile
 * method, the work stays on this thread.
 */
import { existsSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import { CancelledError, fromErrorPayload, RankfoldError, type toErrorPayload } from '../../contract';
import {
  type DenoiseStats,
  denoiseInProcess,
  denoiseLevels,
  type GroupParams,
  joinLevels,
  type LevelJob,
  levelJobs,
  mergeStats,
  type PreparedClean,
} from '../../engine/clean';

/** One level as the workers see it: its planes in shared memory. */
interface CleanWorkerLevel {
  width: number;
  height: number;
  /** SharedArrayBuffers holding the Float32 input planes (gray, or Y Cb Cr; plane 0 guides). */
  input: SharedArrayBuffer[];
  /** SharedArrayBuffers for the Float32 output planes; each job writes its rows. */
  output: SharedArrayBuffer[];
  sigmas: number[];
  params: GroupParams;
}

/** What one clean worker is started with: every level, and this worker's jobs (rows of a level). */
export interface CleanWorkerData {
  levels: CleanWorkerLevel[];
  jobs: LevelJob[];
}

export type CleanWorkerMessage =
  | { type: 'progress'; fraction: number }
  | {
      type: 'done';
      /** Statistics of this worker's full-size rows (none when it had only coarse levels). */
      stats: Array<{ groups: number; rankSum: number; rankMin: number; rankMax: number; exact: number }>;
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
  const levels = denoiseLevels(prep).map((L) => {
    const n = L.width * L.height;
    const input = L.planes.map((p) => {
      const b = new SharedArrayBuffer(n * 4);
      new Float32Array(b).set(p);
      return b;
    });
    const output = L.planes.map(() => new SharedArrayBuffer(n * 4));
    return { width: L.width, height: L.height, input, output, sigmas: L.sigmas, params: L.params };
  });
  const file = cleanWorkerFile();
  const bands = levelJobs(levels, workers).filter((jobs) => jobs.length > 0);
  const fractions = bands.map(() => 0);
  const running: Worker[] = [];
  const stop = () => {
    for (const w of running) void w.terminate();
  };
  try {
    const stats = await Promise.all(
      bands.map(
        (jobs, i) =>
          new Promise<DenoiseStats[]>((resolveBand, rejectBand) => {
            if (hooks.signal?.aborted) return rejectBand(new CancelledError('cleaning'));
            const workerData: CleanWorkerData = { levels, jobs };
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
    const out = levels.map((L) => L.output.map((b) => new Float32Array(b)));
    return { planes: joinLevels(prep, out), stats: mergeStats(stats.flat()) };
  } catch (err) {
    stop();
    throw err;
  }
}
