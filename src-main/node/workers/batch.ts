/**
 * Batch worker: compresses one file per job (see src-main/node/batch/pool.ts for the protocol).
 * Everything that can go wrong with one file is caught here and returned as an ErrorPayload, so the
 * batch goes on; a crash of this thread is contained by the pool.
 */
import { parentPort } from 'node:worker_threads';
import { toErrorPayload } from '../../contract';
import { expandCheck } from '../batch/check';
import { hashFile, loadCompressor, makeOutputFolder } from '../batch/codec';
import { type BatchJobResult, type BatchWork, isSurveyJob, isThumbJob } from '../batch/job';
import { runSurveyJob } from '../batch/survey-job';
import { pairFromSamples, type ThumbPair, thumbnailPair } from '../batch/thumbs';
import { verifyByHeader } from '../batch/verify';
import { decodeImage, probeImage } from '../image/decode';

if (!parentPort) throw new Error('src-main/node/workers/batch.ts must run as a worker thread');
const port = parentPort;

port.on('message', async (msg: { type: string; id: number; payload: BatchWork }) => {
  if (msg.type !== 'job') return;
  const { id, payload } = msg;
  if (isThumbJob(payload)) {
    // Best effort by design: a missing file gives a note in the pair, never an error.
    port.postMessage({ type: 'done', id, result: await thumbnailPair(payload) });
    return;
  }
  const started = performance.now();
  try {
    if (isSurveyJob(payload)) {
      port.postMessage({ type: 'done', id, result: await runSurveyJob(payload) });
      return;
    }
    const fileSha256 = await hashFile(payload.input);
    // Header check first: empty, non-image, unsupported depth and over-limit files fail here, fast and with one wording.
    await probeImage(payload.input, { page: payload.options.page, pixelLimit: payload.options.pixelLimit });
    if (payload.verifyExisting) {
      const kept = await verifyByHeader(payload.input, payload.output, payload.options, decodeImage);
      if (kept) {
        const result: BatchJobResult = { kept, fileSha256, timeMs: performance.now() - started };
        port.postMessage({ type: 'done', id, result });
        return;
      }
    }
    await makeOutputFolder(payload.output);
    const compressFile = await loadCompressor();
    let thumbs: ThumbPair | undefined;
    const bound = payload.thumbsAtOrBelowPsnr;
    const report = await compressFile(
      payload.input,
      payload.output,
      { ...payload.options, force: payload.overwrite || payload.verifyExisting },
      {
        onProgress: (p: unknown) => port.postMessage({ type: 'progress', id, data: p }),
        // Thumbnails while source and reconstruction are still in memory, only for a file that may end
        // among the report's worst (best effort: a failure leaves the runner to draw them from disk).
        onWritten:
          bound === undefined
            ? undefined
            : async (source, result) => {
                if (!(result.psnr <= bound)) return;
                try {
                  thumbs = await pairFromSamples({ ...source, samples: source.planes }, result.decoded);
                } catch {
                  // No pair: the runner draws this file from disk if it ends among the worst.
                }
              },
      },
    );
    const check = payload.expandCheck
      ? await expandCheck(payload.input, payload.output, report, payload.options)
      : undefined;
    const result: BatchJobResult = { report, fileSha256, check, thumbs, timeMs: performance.now() - started };
    port.postMessage({ type: 'done', id, result });
  } catch (err) {
    port.postMessage({ type: 'error', id, error: toErrorPayload(err) });
  }
});
