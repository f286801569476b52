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
  /** `mosaic`: the crops to measure (surveyMosaic, readMosaic) of a scan of `pixels` pixels. */
  points(mosaic: DecodedImage, pixels: number, o: SurveyOptions): Promise<RatePoint[]>;
}

/** Budgets of the trial encodes, as shares of the mosaic's raw sample bytes. */
const TRIAL_SHARES = [0.12, 0.03, 0.0075];
/** Largest mosaic side, and the smallest share of the scan it may skip to (1/16 of the pixels). */
const MOSAIC_MAX = 256;
const MOSAIC_SHARE = 1 / 16;

/** Where the mosaic's crops lie in a `width`×`height` scan: `grid`×`grid` crops of `side` pixels; grid < 2: none. */
interface MosaicLayout {
  grid: number;
  side: number;
  /** Left edge of column gx's crops, and top edge of row gy's crops. */
  xs: number[];
  ys: number[];
}

function mosaicLayout(width: number, height: number, side: number): MosaicLayout {
  const fit = Math.floor(Math.sqrt(width * height * MOSAIC_SHARE) / side);
  // At least 2×2 crops whenever the scan holds them, so a small scan is never surveyed whole (three encodes
  // of a whole scan would cost more than the encode itself).
  const grid = Math.min(
    Math.max(2, Math.min(Math.floor(MOSAIC_MAX / side), fit)),
    Math.floor(width / side),
    Math.floor(height / side),
  );
  // Crop centres at the middle of each grid cell of the scan.
  const at = (n: number, extent: number) => Math.round(((n + 0.5) * extent) / grid - side / 2);
  const cells = Array.from({ length: Math.max(0, grid) }, (_, i) => i);
  return { grid, side, xs: cells.map((g) => at(g, width)), ys: cells.map((g) => at(g, height)) };
}

/** A band of a scan: planes `width` wide whose first sample is the scan's pixel (left, top). */
interface Band {
  planes: Float32Array[];
  width: number;
  left: number;
  top: number;
}

/** Copy crop row `gy` of the mosaic out of `b` into the mosaic's planes `out`. */
function placeRow(out: Float32Array[], l: MosaicLayout, gy: number, b: Band): void {
  const { grid, side } = l;
  const m = grid * side;
  out.forEach((o, c) => {
    const p = b.planes[c];
    for (let gx = 0; gx < grid; gx++)
      for (let y = 0; y < side; y++) {
        const src = (l.ys[gy] - b.top + y) * b.width + l.xs[gx] - b.left;
        o.set(p.subarray(src, src + side), (gy * side + y) * m + gx * side);
      }
  });
}

/** The mosaic as an image of `from`'s sample format, `m`×`m` pixels. */
function mosaicImage(from: DecodedImage, l: MosaicLayout, planes: Float32Array[]): DecodedImage {
  const m = l.grid * l.side;
  const perPixel = from.rawBytes / (from.width * from.height);
  return {
    ...from,
    width: m,
    height: m,
    planes,
    rawBytes: m * m * perPixel,
    meta: { format: from.meta.format },
  };
}

const emptyPlanes = (img: { channels: number }, l: MosaicLayout) =>
  Array.from({ length: img.channels }, () => new Float32Array((l.grid * l.side) ** 2));

/** A mosaic of `grid`×`grid` crops of `side` pixels, spread evenly over the scan; the scan itself if small. */
export function surveyMosaic(img: DecodedImage, side: number): DecodedImage {
  const l = mosaicLayout(img.width, img.height, side);
  if (l.grid < 2) return img;
  const out = emptyPlanes(img, l);
  for (let gy = 0; gy < l.grid; gy++)
    placeRow(out, l, gy, { planes: img.planes, width: img.width, left: 0, top: 0 });
  return mosaicImage(img, l, out);
}

/**
 * The same mosaic, read band by band: `read` decodes one rectangle of the `width`×`height` scan (image/decode.ts
 * `region`), so only the mosaic and one band (the crops' span × `side` rows) are held, never the whole scan.
 * Undefined when the scan is too small for a mosaic (survey it whole).
 */
export async function readMosaic(
  width: number,
  height: number,
  side: number,
  read: (r: { left: number; top: number; width: number; height: number }) => Promise<DecodedImage>,
): Promise<DecodedImage | undefined> {
  const l = mosaicLayout(width, height, side);
  if (l.grid < 2) return undefined;
  const left = l.xs[0];
  const span = l.xs[l.grid - 1] + side - left;
  let out: Float32Array[] | undefined;
  let first: DecodedImage | undefined;
  for (let gy = 0; gy < l.grid; gy++) {
    const band = await read({ left, top: l.ys[gy], width: span, height: side });
    first ??= band;
    out ??= emptyPlanes(band, l);
    placeRow(out, l, gy, { planes: band.planes, width: span, left, top: l.ys[gy] });
  }
  return mosaicImage(first!, l, out!);
}

/** The crop side of the mosaic for a run's tile choice: whole tiles, 64 pixels for `auto` and whole planes. */
export function mosaicSide(tile: TileChoice): number {
  return tile === 'auto' || tile === 0 ? 64 : tile;
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
    async points(mosaic, pixels, o) {
      const tile = o.tile === 'auto' ? 64 : o.tile;
      const scale = pixels / (mosaic.width * mosaic.height);
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
