/**
 * The worker side of a survey job: read the survey's mosaic of crops as the real encode would decode them, then
 * measure its rate–quality points with the current {@link RateSurveyor} (trial encodes through the compress
 * service for now). The crops are read band by band (image/decode.ts `region`), so a large scan is never held
 * whole; a scan too small for a mosaic is decoded and surveyed whole.
 *
 * A scan above 2^25 pixels is written without a residual layer (the tiled encoder, engine/lowrank/tiled.ts, and
 * RESIDUAL_MAX_PIXELS in engine/codec/image-file.ts), so its mosaic is measured base-only too: a two-layer trial
 * would predict several dB more than its file can reach.
 */
import type { CompressOptions } from '../../contract';
import { RESIDUAL_MAX_PIXELS } from '../../engine/codec/image-file';
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
  const layers = surveyLayers(width * height, job.options.layers);
  const points = await surveyor.points(mosaic, width * height, { tile: job.options.tile, layers });
  if (!points.length)
    throw new Error(`${job.input}: no trial encode succeeded, so its rate–quality curve is unknown`);
  const bytesPerPixel = mosaic.rawBytes / (mosaic.width * mosaic.height);
  return {
    method: layers === job.options.layers ? surveyor.method : `${surveyor.method} base-only`,
    width,
    height,
    channels: mosaic.channels,
    bitDepth: mosaic.bitDepth,
    rawBytes: Math.round(width * height * bytesPerPixel),
    points,
    timeMs: performance.now() - started,
  };
}

/** The layers a scan of `pixels` pixels is written with, for its survey: base only above RESIDUAL_MAX_PIXELS. */
export function surveyLayers(pixels: number, layers: CompressOptions['layers']): CompressOptions['layers'] {
  return pixels > RESIDUAL_MAX_PIXELS ? 'base' : layers;
}
