/**
 * The worker side of a survey job: decode the scan as the real encode would, then measure its rate–quality
 * points with the current {@link RateSurveyor} (trial encodes through the compress service for now).
 */
import { decodeImage } from '../image/decode';
import type { SurveyJob, SurveyJobResult } from './job';
import { trialEncodes } from './survey';

export async function runSurveyJob(job: SurveyJob): Promise<SurveyJobResult> {
  const started = performance.now();
  const { compressDecoded } = await import('../services/compress');
  const img = await decodeImage(job.input, { page: job.options.page, pixelLimit: job.options.pixelLimit });
  const surveyor = trialEncodes(compressDecoded);
  const points = await surveyor.points(img, { tile: job.options.tile, layers: job.options.layers });
  if (!points.length)
    throw new Error(`${job.input}: no trial encode succeeded, so its rate–quality curve is unknown`);
  return {
    method: surveyor.method,
    width: img.width,
    height: img.height,
    channels: img.channels,
    bitDepth: img.bitDepth,
    rawBytes: img.rawBytes,
    points,
    timeMs: performance.now() - started,
  };
}
