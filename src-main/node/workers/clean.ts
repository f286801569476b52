/**
 * Denoising worker: runs the patch-group denoiser on one band of rows and writes the band into the shared
 * output planes. Started by src-main/node/services/clean-bands.ts (one worker per band). Every band reads the
 * whole input and processes, in global order, every group that can reach it, so the output does not
 * depend on how many workers share the image.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { toErrorPayload } from '../../contract';
import { denoiseBand } from '../../engine/clean';
import type { CleanWorkerData, CleanWorkerMessage } from '../services/clean-bands';

const data = workerData as CleanWorkerData;
try {
  const planes = data.input.map((b) => new Float32Array(b));
  let last = 0;
  const { width, height, sigmas, params, rowStart, rowEnd } = data;
  const res = denoiseBand({ planes, width, height, sigmas, params, rowStart, rowEnd }, (f) => {
    if (f - last >= 0.02 || f >= 1) {
      last = f;
      parentPort?.postMessage({ type: 'progress', fraction: f } satisfies CleanWorkerMessage);
    }
  });
  for (let c = 0; c < res.planes.length; c++)
    new Float32Array(data.output[c]).set(res.planes[c], data.rowStart * data.width);
  parentPort?.postMessage({ type: 'done', stats: res.stats } satisfies CleanWorkerMessage);
} catch (err) {
  parentPort?.postMessage({ type: 'error', error: toErrorPayload(err) } satisfies CleanWorkerMessage);
}
