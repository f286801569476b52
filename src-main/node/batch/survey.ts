/**
 * The survey of `batch --total`: each file's rate–quality curve, measured cheaply, before any byte is
 * allotted. Everything that measures sits behind {@link RateSurveyor}, so the codec's own rate model can
 * replace the trial encodes below without touching the allocator, the plan or the manifest.
 *
 * Trial encodes (until the model lands): a mosaic of small crops spread over the scan in a regular grid
 * (stratified sampling, so margins and dense areas both count) is compressed by the same service as the
 * real encode at three byte budgets, 0.75 %, 3 % and 12 % of its raw samples; each achieved size is scaled
 * by pixels to the whole scan (the caps asked for, above the file's fixed part, are scaled). Crops are whole tiles (64 pixels, or the run's tile side), so the mosaic's
 * seams fall on tile borders. The mosaic holds at most 1/16 of the scan's pixels (but at least 2×2 crops) and at
 * most 256×256.
 */
import type { CompressOptions, DecodedImage, TileChoice } from '../../contract';
import type { RatePoint } from './rate-curve';

interface SurveyOptions {
  tile: TileChoice;
  layers?: CompressOptions['layers'];
}

/** Measures one decoded scan's rate–quality points. */
export interface RateSurveyor {
  /** Recorded in the survey manifest, e.g. `trial-encodes/3`. */
  readonly method: string;
  points(img: DecodedImage, o: SurveyOptions): Promise<RatePoint[]>;
}

/** Budgets of the trial encodes, as shares of the mosaic's raw sample bytes. */
const TRIAL_SHARES = [0.12, 0.03, 0.0075];
/** Largest mosaic side, and the smallest share of the scan it may skip to (1/16 of the pixels). */
const MOSAIC_MAX = 256;
const MOSAIC_SHARE = 1 / 16;

/** A mosaic of `grid`×`grid` crops of `side` pixels, spread evenly over the scan; the scan itself if small. */
export function surveyMosaic(img: DecodedImage, side: number): DecodedImage {
  const fit = Math.floor(Math.sqrt(img.width * img.height * MOSAIC_SHARE) / side);
  // At least 2×2 crops whenever the scan holds them, so a small scan is never surveyed whole (three encodes
  // of a whole scan would cost more than the encode itself).
  const grid = Math.min(
    Math.max(2, Math.min(Math.floor(MOSAIC_MAX / side), fit)),
    Math.floor(img.width / side),
    Math.floor(img.height / side),
  );
  if (grid < 2) return img;
  const m = grid * side;
  const planes = img.planes.map((p) => {
    const out = new Float32Array(m * m);
    for (let gy = 0; gy < grid; gy++)
      for (let gx = 0; gx < grid; gx++) {
        // Crop centres at the middle of each grid cell of the scan.
        const x0 = Math.round(((gx + 0.5) * img.width) / grid - side / 2);
        const y0 = Math.round(((gy + 0.5) * img.height) / grid - side / 2);
        for (let y = 0; y < side; y++) {
          const src = (y0 + y) * img.width + x0;
          out.set(p.subarray(src, src + side), (gy * side + y) * m + gx * side);
        }
      }
    return out;
  });
  const perPixel = img.rawBytes / (img.width * img.height);
  return {
    ...img,
    width: m,
    height: m,
    planes,
    rawBytes: m * m * perPixel,
    meta: { format: img.meta.format },
  };
}

/** The trial-encode surveyor. `encode` is the compress service's in-memory encoder. */
export function trialEncodes(
  encode: (
    img: DecodedImage,
    o: CompressOptions,
  ) => Promise<{
    bytes: Uint8Array;
    report: { psnr: number; layers?: { baseBytes: number; residualBytes: number } };
  }>,
): RateSurveyor {
  return {
    method: `trial-encodes/${TRIAL_SHARES.length}`,
    async points(img, o) {
      const tile = o.tile === 'auto' ? 64 : o.tile;
      const mosaic = surveyMosaic(img, tile === 0 ? 64 : tile);
      const scale = (img.width * img.height) / (mosaic.width * mosaic.height);
      const points: RatePoint[] = [];
      // The largest budget first: it tells the fixed part of a file (header, tile means), which does not grow
      // with the pixels, so only the coded layers are scaled to the whole scan and the smaller budgets are
      // set above that fixed part.
      let overhead = 0;
      for (const share of TRIAL_SHARES) {
        const bytes = Math.max(64, overhead + Math.round(mosaic.rawBytes * share));
        try {
          const r = await encode(mosaic, { budget: { kind: 'bytes', bytes }, tile, layers: o.layers });
          const coded = r.report.layers
            ? r.report.layers.baseBytes + r.report.layers.residualBytes
            : r.bytes.length;
          overhead = r.bytes.length - coded;
          // The point is the cap asked for (scaled), not the size reached: a cap is what the encode is given,
          // and the encoder refuses caps below its smallest file even when it writes less.
          points.push({
            bytes: Math.round(overhead + Math.max(0, bytes - overhead) * scale),
            psnr: r.report.psnr,
          });
        } catch (err) {
          // Below the smallest file for this mosaic: that point is simply not measured.
          if (!/smallest possible file/.test((err as Error).message)) throw err;
        }
      }
      return points;
    },
  };
}
