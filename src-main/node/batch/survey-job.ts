/**
 * The worker side of a survey job: read the survey's mosaic of crops as the real encode would decode them, then
 * measure its rate–quality points with the current {@link RateSurveyor} (trial encodes through the compress
 * service for now). The crops are read band by band (image/decode.ts `region`), so a large scan is never held
 * whole; a scan too small for a mosaic is decoded and surveyed whole.
 */
import { decodeImage, probeImage } from '../image/decode';
import type { SurveyJob, SurveyJobResult } from './job';
import { mosaicSide, readMosaic, trialEncodes } from './survey';

export async function runSurveyJob(job: SurveyJob): Promise<SurveyJobResult> {
  const started = performance.now();
  const { compressDecoded } = await import('../services/compress');
  const opts = { page: job.options.page, pixelLimit: job.options.pixelLimit };
  const { width, height } = await probeImage(job.input, opts);
  const mosaic =
    (await readMosaic(width, height, mosaicSide(job.options.tile), (region) =>
      decodeImage(job.input, { ...opts, region }),
    )) ?? (await decodeImage(job.input, opts));
  const surveyor = trialEncodes(compressDecoded);
  const points = await surveyor.points(mosaic, width * height, {
    tile: job.options.tile,
    layers: job.options.layers,
  });
  if (!points.length)
    throw new Error(`${job.input}: no trial encode succeeded, so its rate–quality curve is unknown`);
  const bytesPerPixel = mosaic.rawBytes / (mosaic.width * mosaic.height);
  return {
    method: surveyor.method,
    width,
    height,
    channels: mosaic.channels,
    bitDepth: mosaic.bitDepth,
    rawBytes: Math.round(width * height * bytesPerPixel),
    points,
    timeMs: performance.now() - started,
  };
}
