/**
 * Denoising worker: runs the patch-group denoiser on its jobs (rows of the full size or of a coarse level,
 * engine/clean/level-jobs.ts) and writes those rows into the shared output planes. Started by
 * src-main/node/services/clean-bands.ts. Every job reads its whole level and processes, in global order,
 * every group that can reach its rows, so the output does not depend on how many workers share the image.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { toErrorPayload } from '../../contract';
import { runLevelJobs } from '../../engine/clean';
import type { CleanWorkerData, CleanWorkerMessage } from '../services/clean-bands';

const data = workerData as CleanWorkerData;
try {
  const levels = data.levels.map((L) => ({ ...L, planes: L.input.map((b) => new Float32Array(b)) }));
  const out = data.levels.map((L) => L.output.map((b) => new Float32Array(b)));
  let last = 0;
  const stats = runLevelJobs(levels, data.jobs, out, (f) => {
    if (f - last >= 0.02 || f >= 1) {
      last = f;
      parentPort?.postMessage({ type: 'progress', fraction: f } satisfies CleanWorkerMessage);
    }
  });
  parentPort?.postMessage({ type: 'done', stats } satisfies CleanWorkerMessage);
} catch (err) {
  parentPort?.postMessage({ type: 'error', error: toErrorPayload(err) } satisfies CleanWorkerMessage);
}
