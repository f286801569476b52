/**
 * The large-scan encoder's quality figures (./tiled): the samples are rebuilt band by band from the packed
 * store at the chosen ranks (the entropy coding is lossless, so these are the samples a reader decodes:
 * ./decode-image does the same per-band arithmetic) and measured against the scan as they go, with no
 * full-size reconstruction.
 */
import { reconstructRows } from '../codec/quantise';
import { type QuantPlane, tileGrid } from '../codec/quantised';
import { psnrFromMse, SseStream, SsimStream } from '../metrics';
import { planesToSamples, type SampleArray } from './decode-image';
import { type Geometry, type PackedPlane, packedTile } from './packed-store';

/** The packed planes at their chosen ranks: what the file holds. */
export interface PackedPlanes {
  store: PackedPlane[];
  geom: Geometry;
  /** Ranks per [plane][tile]. */
  ranks: Int32Array[];
  /** Plane k's step is delta·stepScales[k]. */
  delta: number;
  stepScales: number[];
  meanStep: number;
}

/**
 * Rebuild the scan from `coded` band by band and compare it with the scan's samples: whether they are
 * identical, PSNR and SSIM pooled as psnrPlanes and ssimPlanes pool them over whole planes (the same sums in
 * the same order), and the sum of squared errors.
 */
export function measureRebuilt(
  img: { width: number; height: number; bitDepth: 8 | 16; channels: number; planes: SampleArray[] },
  coded: PackedPlanes,
  cancel: () => void,
): { lossless: boolean; psnr: number; ssim: number; sse: number } {
  const { width, height } = img;
  const { store, geom, delta, stepScales, meanStep } = coded;
  const { tile, cols } = geom;
  const ranksPT = coded.ranks;
  const colour = img.channels >= 3;
  const max = img.bitDepth === 16 ? 65535 : 255;
  const nc = colour ? 3 : 1;
  const sseStreams = Array.from({ length: nc }, () => new SseStream(true));
  const withSsim = width >= 11 && height >= 11;
  const ssimStreams = withSsim ? Array.from({ length: nc }, () => new SsimStream(width, height, max)) : [];
  const floats = store.map(() => new Float64Array(tile * width));
  const rebuilt = Array.from({ length: nc }, () =>
    img.bitDepth === 16 ? new Uint16Array(tile * width) : new Uint8Array(tile * width),
  );
  let lossless = true;
  for (let y0 = 0, br = 0; y0 < height; y0 += tile, br++) {
    cancel();
    const bh = Math.min(tile, height - y0);
    const len = bh * width;
    const from = y0 * width;
    const rects = tileGrid(width, bh, tile);
    store.forEach((pp, k) => {
      const band: QuantPlane = {
        width,
        height: bh,
        tile,
        step: delta * stepScales[k],
        meanStep,
        tiles: rects.map((_, j) => packedTile(pp, geom, br * cols + j, ranksPT[k], undefined)),
      };
      reconstructRows(band, rects, 0, bh, floats[k]);
    });
    planesToSamples(floats, colour, len, img.bitDepth, rebuilt, 0);
    let same: boolean = lossless;
    for (let c = 0; c < nc && same; c++) {
      const a = img.planes[c];
      const b = rebuilt[c];
      for (let i = 0; i < len; i++)
        if (a[from + i] !== b[i]) {
          same = false;
          break;
        }
    }
    // SSIM starts at the first band that differs (identical rows before it add exactly 1 per window).
    if (lossless && !same) for (let c = 0; c < nc; c++) ssimStreams[c]?.skipIdentical(y0, img.planes[c]);
    lossless = same;
    for (let c = 0; c < nc; c++) {
      const a = img.planes[c];
      const b = rebuilt[c];
      sseStreams[c].add(a, b, from, 0, len);
      if (!lossless) ssimStreams[c]?.addRows(a, b, bh, from, 0);
    }
  }
  // Pooled as psnrPlanes and ssimPlanes pool them over whole planes (the same sums in the same order).
  let total = 0;
  for (let c = 0; c < nc; c++) total += sseStreams[c].total();
  // Identical samples: PSNR ∞ and SSIM exactly 1 (each window's two factors are then 1).
  const psnr = lossless ? Number.POSITIVE_INFINITY : psnrFromMse(total / (nc * width * height), max);
  let ssimSum = 0;
  for (let c = 0; c < nc && withSsim && !lossless; c++) ssimSum += ssimStreams[c].value();
  const ssim = withSsim ? (lossless ? 1 : ssimSum / nc) : Number.NaN;
  let sse = 0;
  for (let c = 0; c < nc; c++) for (const block of sseStreams[c].blocks()) sse += block;
  return { lossless, psnr, ssim, sse };
}
