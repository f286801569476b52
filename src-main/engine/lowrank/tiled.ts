/**
 * The bounded-memory encoder for large scans (byte budgets, tiles).
 *
 * The scan stays as integer samples (1 or 2 bytes each). It is read one band of tile rows at a time:
 * the band is converted to float (gray, or YCbCr), each tile is factored and its components are quantised
 * at one step Δ, and only the quantised components (with their σ and errors) are kept; the band's floats,
 * tile copies and singular vectors are dropped. Constant tiles (blank paper) have zero energy after their
 * mean and cost no SVD at all. One greedy order over every tile of the scan then meets the byte budget on
 * the real encoded size, as {@link encodeScan} does.
 *
 * Δ and the tile side come from encoding a centred crop of about {@link AUTO_PROBE_PIXELS} at the same bits
 * per pixel with the full encoder (the same crop `--tile auto` already uses to pick a tile side). The full
 * encoder instead tries a few steps on every tile; with one step here, a file can be a little worse in
 * PSNR than the whole search would find, and never over the budget.
 *
 * Memory: the samples, the kept components in a packed store (one byte per vector entry, typed arrays
 * only: no object per component or vector) and O(width·tile) per band. The file is sized by coding its
 * planes from that store tile by tile, and PSNR/SSIM are measured band by band on the samples rebuilt
 * from it (SseStream, SsimStream), so neither a full-size float plane nor a full reconstruction is held.
 * Tiles whose energy is below the quantiser's dead zone ("quiet", see quietEnergy) skip the SVD.
 */
import type { Budget, DecodedImage } from '../../contract';
import { UsageError } from '../../contract/errors';
import { encodeLosslessPlane } from '../codec/alpha';
import {
  encodePlanes,
  type PlaneHeader,
  quantiserInfo,
  type RkfHeader,
  readImageHeader,
  type SampleArray,
  writeImageFile,
} from '../codec/image-file';
import { DEAD_ZONE, reconstructRows } from '../codec/quantise';
import { type QuantPlane, type QuantTile, tileGrid } from '../codec/quantised';
import { psnrFromMse, SseStream, SsimStream } from '../metrics';
import { rgbToYcbcr, roundInto, YCBCR_ERROR_WEIGHTS, ycbcrToRgbSamples } from './colour';
import {
  AUTO_PROBE_PIXELS,
  budgetBytes,
  type EncodeOptions,
  encodeScan,
  type PlaneRankSummary,
} from './encode';
import { factorPlane, type PlaneFactors, type TileFactors } from './factorise';
import {
  buildCandidate,
  type Comp,
  collectComponents,
  costTable,
  type PlaneInput,
  prefixForBytes,
  vectorBits,
} from './solve';

/** A decoded scan whose planes are integer samples (Uint8Array for 8-bit, Uint16Array for 16-bit). */
export interface SampleImage extends Omit<DecodedImage, 'planes'> {
  planes: SampleArray[];
}

/** Scans above this many pixels take the tiled, integer-sample path by default (2^25 ≈ 33.5 MP). */
export const TILED_PIXELS = 1 << 25;

export interface TiledEncodeResult {
  bytes: Uint8Array;
  header: RkfHeader;
  ranks: PlaneRankSummary[];
  psnr: number;
  ssim: number;
  errors: { frobenius: number; frobeniusOptimal: number; spectralBound: number };
  factorMs: number;
  encodeMs: number;
  lossless: boolean;
  /** Tiles that were constant after their mean and skipped the SVD. */
  constantTiles: number;
  /** Tiles too weak for any component to survive quantisation, which skipped the SVD (see quietEnergy). */
  quietTiles: number;
  /** Components dropped while streaming because their tile could not reach the pruning slope. */
  prunedComponents: number;
}

/** Test switches of the tiled encoder. */
export interface TiledInternals {
  /** Skip the SVD of quiet tiles (default true; false factors every non-constant tile, for comparison). */
  skipQuiet?: boolean;
}

/** Whether the tiled encoder handles this budget and tile choice (byte budgets with tiles). */
export function tiledEncoderFits(budget: Budget, tile: number | 'auto'): boolean {
  return tile !== 0 && (budget.kind === 'bytes' || budget.kind === 'percent' || budget.kind === 'bpp');
}

const EMPTY_F32 = new Float32Array(0);
const EMPTY_F64 = new Float64Array(0);
/** Singular vectors are dropped once a tile's components are quantised. */
const NO_VECTORS = { rows: 0, cols: 0, data: EMPTY_F64 };

/** A centred crop of about AUTO_PROBE_PIXELS as float planes, for the probe encode. */
function centredCrop(img: SampleImage): DecodedImage {
  const { width, height } = img;
  const side = Math.sqrt(AUTO_PROBE_PIXELS);
  const cw = Math.min(width, Math.round(side * Math.sqrt(width / height)));
  const ch = Math.min(height, Math.round(AUTO_PROBE_PIXELS / cw));
  const x0 = Math.floor((width - cw) / 2);
  const y0 = Math.floor((height - ch) / 2);
  const planes = img.planes.map((p) => {
    const out = new Float32Array(cw * ch);
    for (let y = 0; y < ch; y++)
      out.set(p.subarray((y0 + y) * width + x0, (y0 + y) * width + x0 + cw), y * cw);
    return out;
  });
  return {
    ...img,
    width: cw,
    height: ch,
    planes,
    rawBytes: (img.rawBytes * cw * ch) / (width * height),
    meta: { ...img.meta, icc: undefined },
  };
}

/**
 * Encode a large scan under a byte budget with tiles, in bounded memory (see the module comment).
 * @throws UsageError when the budget is not a byte budget or is below the smallest possible file.
 */
export function encodeScanTiled(
  img: SampleImage,
  opts: EncodeOptions,
  internals: TiledInternals = {},
): TiledEncodeResult {
  const now = opts.now ?? Date.now;
  const progress = opts.onProgress ?? (() => {});
  const cancel = opts.checkCancelled ?? (() => {});
  const entropy = opts.entropy ?? 'rc';
  const max = img.bitDepth === 16 ? 65535 : 255;
  const { width, height } = img;
  const byteBudget = budgetBytes(opts.budget, img);
  if (byteBudget === undefined || !tiledEncoderFits(opts.budget, opts.tile))
    throw new UsageError(`${img.file}: the tiled encoder takes a byte budget (--budget or --bpp) with tiles`);
  if (Math.min(width, height) < 8)
    throw new UsageError(`${img.file}: image is ${width}×${height} pixels; tiles need at least 8×8`);
  const colour = img.channels >= 3;
  const names = colour ? ['Y', 'Cb', 'Cr'] : ['gray'];
  const weights = colour ? [...YCBCR_ERROR_WEIGHTS] : [1];
  const hasAlpha = img.channels === 2 || img.channels === 4;
  const meanStep = max / 1020;
  const t0 = now();

  // 1. Tile side and step from the centred crop, at the scan's bits per pixel.
  progress('probe', 0);
  const crop = centredCrop(img);
  const probe = encodeScan(crop, {
    ...opts,
    budget: { kind: 'bpp', bpp: (8 * byteBudget) / (width * height) },
    onProgress: undefined,
  });
  const tile = opts.tile === 'auto' ? probe.ranks[0]?.tile || 64 : opts.tile;
  const delta = probe.header.planes[0].step;
  const stepScales = weights.map((w) => Math.sqrt(weights[0] / w));
  cancel();
  // The crop's rate–distortion slope at its budget (gain per estimated bit of its last component), and
  // its cost table: a component whose tile cannot reach PRUNE_SLOPE of that slope is dropped at once.
  const cropPlanes: ArrayLike<number>[] = colour
    ? rgbToYcbcr(crop.planes[0], crop.planes[1], crop.planes[2], img.bitDepth)
    : [crop.planes[0]];
  const cropCand = buildCandidate(
    cropPlanes.map((p, k) => ({
      factors: factorPlane(p, crop.width, crop.height, { tile, meanRemoval: true, meanStep }),
      weight: weights[k],
      stepScale: stepScales[k],
    })),
    delta,
  );
  // At twice the crop's bytes: the estimated bits can overstate the coded size, which would set λ too high.
  const cropP = prefixForBytes(cropCand, 2 * probe.bytes.length, 1);
  const last = cropP > 0 ? cropCand.order[cropP - 1] : undefined;
  const minSlope = last && last.cost > 0 ? (PRUNE_SLOPE * last.gain) / last.cost : 0;
  const table = costTable(cropCand.comps);

  // 2. Factor and quantise band by band; keep only the quantised components, packed (see PackedPlane).
  const cols = Math.ceil(width / tile);
  const geom = { width, height, tile, cols };
  const store = names.map(() => newPackedPlane(geom));
  let constantTiles = 0;
  let quietTiles = 0;
  let prunedComponents = 0;
  const skipQuiet = internals.skipQuiet ?? true;
  const gray = new Float64Array(colour ? 0 : tile * width);
  const bandFloats = (y0: number, bh: number): Float64Array[] => {
    const from = y0 * width;
    const to = from + bh * width;
    return colour
      ? rgbToYcbcr(
          img.planes[0].subarray(from, to),
          img.planes[1].subarray(from, to),
          img.planes[2].subarray(from, to),
          img.bitDepth,
        )
      : [toFloat(img.planes[0], from, to, gray)];
  };
  for (let y0 = 0; y0 < height; y0 += tile) {
    cancel();
    const bh = Math.min(tile, height - y0);
    const bands = bandFloats(y0, bh);
    const quiet: number[][] = [];
    const inputs: PlaneInput[] = bands.map((b, k) => {
      const f = factorBand(b, width, bh, tile, meanStep, skipQuiet ? quietEnergy(delta * stepScales[k]) : 0);
      quiet.push(f.quiet);
      return { factors: f.factors, weight: weights[k], stepScale: stepScales[k] };
    });
    const got = collectComponents(inputs, delta);
    inputs.forEach((inp, k) => {
      const lists: Comp[][] = [];
      const es: Float64Array[] = [];
      inp.factors.tiles.forEach((tf, t) => {
        if (tf.energy === 0) constantTiles++;
        let list = got.comps[k][t];
        let e = got.errs[k][t];
        const keep = minSlope > 0 ? usefulPrefix(list, e, tf.s, weights[k], table, minSlope) : list.length;
        if (keep < list.length) {
          list = list.slice(0, keep);
          e = e.slice(0, keep);
          prunedComponents += got.comps[k][t].length - keep;
        }
        lists.push(list);
        es.push(e);
      });
      const base = store[k].nTiles;
      for (const t of quiet[k]) store[k].quiet.push(base + t);
      quietTiles += quiet[k].length;
      appendBand(store[k], inp.factors.tiles, lists, es);
    });
    progress('factor', (0.8 * (y0 + bh)) / height);
  }
  const order = orderPacked(store, weights);
  const t1 = now();

  // 3. The budget on the real encoded size.
  progress('allocate', 0.82);
  const alpha = hasAlpha ? encodeLosslessPlane(img.planes[img.channels - 1], width, height) : undefined;
  const header = (planes: QuantPlane[], lossless: boolean): RkfHeader => ({
    format: 'rankfold',
    layout: 'image',
    width,
    height,
    bitDepth: img.bitDepth,
    channels: img.channels,
    colourTransform: colour ? 'ycbcr-jfif' : 'none',
    alpha: hasAlpha ? 'lossless' : 'none',
    quantiser: quantiserInfo(),
    planes: planes.map(
      (p, k): PlaneHeader => ({ name: names[k], tile: p.tile, step: p.step, meanStep: p.meanStep, entropy }),
    ),
    sourceSha256: img.sourceSha256,
    alphaSha256: hasAlpha ? opts.alphaSha256 : undefined,
    lossless,
    metadata: {
      format: img.meta.format,
      density: img.meta.density,
      orientation: img.meta.orientation,
      page: img.meta.page,
      pages: img.meta.pages,
      icc: img.meta.icc ? true : undefined,
    },
    encoder: opts.encoder ?? 'rankfold',
  });
  // The planes at given ranks, their tiles made one at a time as the entropy coder walks them.
  const planesAt = (ranks: Int32Array[]): QuantPlane[] =>
    store.map((pp, k) => ({
      width,
      height,
      tile,
      step: delta * stepScales[k],
      meanStep,
      tiles: lazyTiles(pp, geom, ranks[k]),
    }));
  const build = (planes: QuantPlane[], lossless = false) =>
    writeImageFile({
      header: header(planes, lossless),
      planes: encodePlanes(planes, entropy, opts.compressors),
      alpha,
      icc: img.meta.icc,
    });
  const size = (P: number) => {
    cancel();
    return build(planesAt(prefixRanksPacked(store, order, P))).length;
  };
  const overhead = size(0);
  if (overhead > byteBudget)
    throw new UsageError(
      `${img.file}: a budget of ${byteBudget} bytes is below the smallest possible file for this image (${overhead} bytes: header, tile means${colour ? ', three planes' : ''}${hasAlpha ? ', lossless alpha' : ''}); raise the budget or use a larger --tile`,
    );
  const { P } = refinePacked(order.cumCost, byteBudget, overhead, 1, size);
  const ranksPT = prefixRanksPacked(store, order, P);
  const planes = planesAt(ranksPT);

  // 4. Write, then rebuild the samples band by band from the quantised components just coded (the
  // entropy coding is lossless, so these are the samples a reader decodes: decodeImageFileSamples does the
  // same per-band arithmetic) and measure them against the scan as they go: no full-size reconstruction.
  progress('write', 0.92);
  let bytes = build(planes);
  const fileHeader = readImageHeader(bytes, img.file, { compressors: opts.compressors }).header;
  progress('measure', 0.96);
  const nc = colour ? 3 : 1;
  const sseStreams = Array.from({ length: nc }, () => new SseStream(true));
  const withSsim = width >= 11 && height >= 11;
  const ssimStreams = withSsim ? Array.from({ length: nc }, () => new SsimStream(width, height, max)) : [];
  const floats = names.map(() => new Float64Array(tile * width));
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
    if (colour)
      ycbcrToRgbSamples(
        floats[0],
        floats[1],
        floats[2],
        len,
        img.bitDepth,
        rebuilt[0],
        rebuilt[1],
        rebuilt[2],
        0,
      );
    else roundInto(floats[0], len, max, rebuilt[0], 0);
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
  // The lossless flag changes the header only, not the samples.
  if (lossless) bytes = build(planes, true);
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
  let trunc = 0;
  let spectral = 0;
  const ranks: PlaneRankSummary[] = store.map((pp, k) => {
    const r = new Int32Array(pp.nTiles);
    for (let t = 0; t < pp.nTiles; t++) r[t] = Math.min(ranksPT[k][t], pp.first[t + 1] - pp.first[t]);
    return { channel: names[k], tile, ranks: r };
  });
  store.forEach((pp, k) => {
    for (let t = 0; t < pp.nTiles; t++) {
      const r = ranks[k].ranks[t];
      const f = pp.first[t];
      const count = pp.first[t + 1] - f;
      let kept = 0;
      for (let i = 0; i < r; i++) kept += pp.sigma[f + i] * pp.sigma[f + i];
      trunc += weights[k] * Math.max(0, pp.energy[t] - kept);
      if (r < count) spectral = Math.max(spectral, pp.sigma[f + r]);
      else if (pp.sNext[t] >= 0) spectral = Math.max(spectral, pp.sNext[t]);
    }
  });
  // Quiet tiles skipped their SVD; their σ₁ (≤ √energy) is computed only where it could raise the maximum.
  spectral = quietSpectral(store, geom, spectral, (y0, bh) => bandFloats(y0, bh), meanStep);
  const t2 = now();
  progress('done', 1);
  return {
    bytes,
    header: { ...fileHeader, lossless },
    ranks,
    psnr,
    ssim,
    errors: { frobenius: Math.sqrt(sse), frobeniusOptimal: Math.sqrt(trunc), spectralBound: spectral },
    factorMs: t1 - t0,
    encodeMs: t2 - t1,
    lossless,
    constantTiles,
    quietTiles,
    prunedComponents,
  };
}

/** Samples [from, to) of an integer plane as float64, into `out`. */
function toFloat(p: SampleArray, from: number, to: number, out: Float64Array): Float64Array {
  const n = to - from;
  for (let i = 0; i < n; i++) out[i] = p[from + i];
  return out.subarray(0, n);
}

/**
 * Below this fraction of the dead-zone energy a tile is "quiet" and skips its SVD. The margin covers the
 * rounding of the computed σ₁ (a one-sided Jacobi SVD applies orthogonal rotations, which keep ‖A‖_F to
 * within a few units of roundoff per sweep; common practice, from memory), many orders of magnitude over.
 */
export const QUIET_MARGIN = 1 - 1e-6;

/**
 * The energy below which a mean-removed tile cannot keep any component at a plane step `step`.
 *
 * Proof. Let A be the tile less its stored mean, with singular values σ₁ ≥ σ₂ ≥ … and
 * ‖A‖²_F = Σσᵢ² (Golub & Van Loan, Matrix Computations, 4th ed., §2.4.2, from memory), so σ₁ ≤ ‖A‖_F.
 * Component i is stored as a = σᵢuᵢ and b = σᵢvᵢ (‖uᵢ‖ = ‖vᵢ‖ = 1, ../codec/quantise.ts), so every entry
 * has |aⱼ| ≤ σᵢ, and quantiseVector rounds x to 0 when |x| < (0.5 + DEAD_ZONE)·Δ. Hence, if
 * ‖A‖_F < (0.5 + DEAD_ZONE)·Δ, every entry of every component quantises to 0: the decoder's scale
 * (componentScale) is 0 and the tile is rank 0 at any budget. The candidate search (solve.ts
 * tileComponents) states the same rule per component — it stops at the first σᵢ < (0.5 + DEAD_ZONE)·Δ —
 * and σ₁ ≤ ‖A‖_F makes it stop before the first. With QUIET_MARGIN the computed σ₁ (which may exceed
 * ‖A‖_F by roundoff) is still under the threshold, so a skipped tile is one the full path gives no
 * component, and the file is unchanged. test/bigscan checks this on random tiles.
 */
export function quietEnergy(step: number): number {
  const t = (0.5 + DEAD_ZONE) * step;
  return QUIET_MARGIN * t * t;
}

/**
 * factorPlane over one band (mean removal, exact Jacobi per tile), with constant tiles short-circuited:
 * a tile whose samples all equal its stored mean has zero energy and no components, found in one pass and
 * without copying it. A tile whose mean-removed energy is below `quietBelow` (see {@link quietEnergy}) is
 * "quiet": its mean and energy are computed as factorPlane computes them and its SVD is skipped (its index
 * is returned in `quiet`). Other tiles are copied out and factored alone, which gives factorPlane's result.
 */
function factorBand(
  band: Float64Array,
  width: number,
  bh: number,
  tile: number,
  meanStep: number,
  quietBelow: number,
): { factors: PlaneFactors; quiet: number[] } {
  const rects = tileGrid(width, bh, tile);
  const out: TileFactors[] = [];
  const quiet: number[] = [];
  for (let t = 0; t < rects.length; t++) {
    const rect = rects[t];
    const { x, y, w, h } = rect;
    const first = band[y * width + x];
    let constant = true;
    for (let i = 0; i < h && constant; i++) {
      const row = (y + i) * width + x;
      for (let j = 0; j < w; j++)
        if (band[row + j] !== first) {
          constant = false;
          break;
        }
    }
    const meanQ = Math.round(first / meanStep);
    if (constant && meanQ * meanStep === first) {
      out.push({ rect, meanQ, energy: 0, data: EMPTY_F32, s: EMPTY_F64, U: NO_VECTORS, V: NO_VECTORS });
      continue;
    }
    const a = new Float64Array(w * h);
    for (let i = 0; i < h; i++) a.set(band.subarray((y + i) * width + x, (y + i) * width + x + w), i * w);
    if (quietBelow > 0) {
      const q = meanAndEnergy(a, meanStep);
      if (q.energy < quietBelow) {
        out.push({
          rect,
          meanQ: q.meanQ,
          energy: q.energy,
          data: EMPTY_F32,
          s: EMPTY_F64,
          U: NO_VECTORS,
          V: NO_VECTORS,
        });
        quiet.push(t);
        continue;
      }
    }
    const f = factorPlane(a, w, h, { tile, meanRemoval: true, meanStep });
    out.push({ ...f.tiles[0], rect });
  }
  return { factors: { width, height: bh, tile, meanStep, tiles: out }, quiet };
}

/** A tile's quantised mean and ‖tile − mean‖²_F, with factorPlane's expressions in its order. */
export function meanAndEnergy(a: Float64Array, meanStep: number): { meanQ: number; energy: number } {
  let sum = 0;
  for (let k = 0; k < a.length; k++) sum += a[k];
  const meanQ = Math.round(sum / a.length / meanStep);
  const mean = meanQ * meanStep;
  let energy = 0;
  for (let k = 0; k < a.length; k++) {
    const d = a[k] - mean;
    energy += d * d;
  }
  return { meanQ, energy };
}

/**
 * Fraction of the crop's final slope below which components are dropped while streaming (the crop stands
 * for the scan; the margin covers a scan richer than its centre). Measured on an 8000×8000 RGB page at
 * --budget 5 %: 1/4 dropped so many that the file stayed 15 % under the budget at 41.3 dB; 1/16 kept the
 * unpruned result (42.84 dB) and dropped 644 k components, and peak memory fell from 2.1 to 1.25 GB.
 */
export const PRUNE_SLOPE = 1 / 16;

/**
 * Components of a tile worth keeping: up to the last one whose own gain per estimated bit is ≥ minSlope.
 * (A greedy block taken at slope λ has an average slope ≥ λ, so one of its components has; the components
 * after the last such one are not kept. Heuristic: blocks whose best member comes before a weak tail lose
 * that tail, which the measured sizes showed to be rare.)
 */
function usefulPrefix(
  list: Comp[],
  errs: Float64Array,
  s: Float64Array,
  weight: number,
  table: Float64Array[],
  minSlope: number,
): number {
  let keep = 0;
  for (let i = 0; i < list.length; i++) {
    const gain = weight * (s[i] * s[i] - errs[i]);
    const bits = vectorBits(list[i].qu, table) + vectorBits(list[i].qv, table) + 2;
    if (gain >= minSlope * bits) keep = i + 1;
  }
  return keep;
}

// ---------------------------------------------------------------------------------------------------------
// The packed candidate store: every kept component of the scan in typed arrays, no object per vector.

/** Entry value that stands for "the next value of the band's escape list" (entries outside −127…127). */
const ESCAPE = -128;

/** One band row's vector entries: qu then qv of each component in tile order, one byte each. */
interface BandStore {
  q: Int8Array;
  /** Entries that do not fit a byte, in the order they occur. */
  esc: Int32Array;
}

/** One plane's tiles (raster order) and their quantised candidate components. */
interface PackedPlane {
  g: Geometry;
  nTiles: number;
  meanQ: Int32Array;
  energy: Float64Array;
  /** σ after the tile's last kept component (for the spectral bound), −1 when there is none. */
  sNext: Float64Array;
  /** Components of tile t are first[t] … first[t + 1] − 1. */
  first: Int32Array;
  nComps: number;
  /** Per component: σ, the refit error (dropped once ordered), its first entry and first escape in its band. */
  sigma: Float64Array;
  err: Float64Array;
  at: Int32Array;
  escAt: Int32Array;
  bands: BandStore[];
  /** Tiles that skipped the SVD as quiet (see quietEnergy). */
  quiet: number[];
}

interface Geometry {
  width: number;
  height: number;
  tile: number;
  cols: number;
}

function newPackedPlane(g: Geometry): PackedPlane {
  const nTiles = g.cols * Math.ceil(g.height / g.tile);
  const c = Math.max(1024, nTiles);
  return {
    g,
    nTiles: 0,
    meanQ: new Int32Array(nTiles),
    energy: new Float64Array(nTiles),
    sNext: new Float64Array(nTiles),
    first: new Int32Array(nTiles + 1),
    nComps: 0,
    sigma: new Float64Array(c),
    err: new Float64Array(c),
    at: new Int32Array(c),
    escAt: new Int32Array(c),
    bands: [],
    quiet: [],
  };
}

function grow<T extends Float64Array | Int32Array>(a: T, need: number): T {
  if (need <= a.length) return a;
  const b = new (a.constructor as new (n: number) => T)(Math.max(need, Math.ceil(a.length * 1.5)));
  b.set(a);
  return b;
}

/** Append one band row of tiles (their kept components, σ and errors) to a plane's store. */
function appendBand(pp: PackedPlane, tiles: TileFactors[], lists: Comp[][], errs: Float64Array[]): void {
  let entries = 0;
  let escapes = 0;
  let comps = 0;
  for (const list of lists)
    for (const c of list) {
      comps++;
      entries += c.qu.length + c.qv.length;
      for (const q of [c.qu, c.qv])
        for (let j = 0; j < q.length; j++) if (q[j] < -127 || q[j] > 127) escapes++;
    }
  const need = pp.nComps + comps;
  pp.sigma = grow(pp.sigma, need);
  pp.err = grow(pp.err, need);
  pp.at = grow(pp.at, need);
  pp.escAt = grow(pp.escAt, need);
  const band: BandStore = { q: new Int8Array(entries), esc: new Int32Array(escapes) };
  pp.bands.push(band);
  let p = 0;
  let e = 0;
  tiles.forEach((tf, i) => {
    const t = pp.nTiles++;
    const list = lists[i];
    pp.meanQ[t] = tf.meanQ;
    pp.energy[t] = tf.energy;
    pp.sNext[t] = list.length < tf.s.length ? tf.s[list.length] : -1;
    pp.first[t] = pp.nComps;
    for (let k = 0; k < list.length; k++) {
      const c = pp.nComps++;
      pp.sigma[c] = tf.s[k];
      pp.err[c] = errs[i][k];
      pp.at[c] = p;
      pp.escAt[c] = e;
      for (const q of [list[k].qu, list[k].qv])
        for (let j = 0; j < q.length; j++) {
          const v = q[j];
          if (v < -127 || v > 127) {
            band.q[p++] = ESCAPE;
            band.esc[e++] = v;
          } else band.q[p++] = v;
        }
    }
    pp.first[t + 1] = pp.nComps;
  });
}

/** Rect of tile t in raster order (as tileGrid gives it). */
function tileRect(g: Geometry, t: number): { x: number; y: number; w: number; h: number } {
  const x = (t % g.cols) * g.tile;
  const y = Math.floor(t / g.cols) * g.tile;
  return { x, y, w: Math.min(g.tile, g.width - x), h: Math.min(g.tile, g.height - y) };
}

/** Component c (of a tile in band row br) into qu and qv (of the tile's height and width). */
function unpack(pp: PackedPlane, br: number, c: number, qu: Int32Array, qv: Int32Array): void {
  const { q, esc } = pp.bands[br];
  let p = pp.at[c];
  let e = pp.escAt[c];
  for (let j = 0; j < qu.length; j++) {
    const v = q[p++];
    qu[j] = v === ESCAPE ? esc[e++] : v;
  }
  for (let j = 0; j < qv.length; j++) {
    const v = q[p++];
    qv[j] = v === ESCAPE ? esc[e++] : v;
  }
}

/** Int32Arrays reused from tile to tile while an entropy coder walks the tiles in order. */
class VectorPool {
  private readonly byLen = new Map<number, Int32Array[]>();
  get(len: number, i: number): Int32Array {
    let list = this.byLen.get(len);
    if (!list) {
      list = [];
      this.byLen.set(len, list);
    }
    while (list.length <= i) list.push(new Int32Array(len));
    return list[i];
  }
}

/** Tile t at rank min(ranks[t], its component count) as a QuantTile; vectors from `pool` when given. */
function packedTile(
  pp: PackedPlane,
  g: Geometry,
  t: number,
  ranks: Int32Array,
  pool: VectorPool | undefined,
): QuantTile {
  const f = pp.first[t];
  const r = Math.min(ranks[t], pp.first[t + 1] - f);
  const { w, h } = tileRect(g, t);
  const br = Math.floor(t / g.cols);
  const u: Int32Array[] = [];
  const v: Int32Array[] = [];
  for (let i = 0; i < r; i++) {
    const qu = pool ? pool.get(h, 2 * i) : new Int32Array(h);
    const qv = pool ? pool.get(w, 2 * i + 1) : new Int32Array(w);
    unpack(pp, br, f + i, qu, qv);
    u.push(qu);
    v.push(qv);
  }
  return { meanQ: pp.meanQ[t], u, v };
}

/**
 * A plane's tiles as an array whose elements are made when read: iterating (what the entropy coders do:
 * one tile after another) reuses one set of vectors, so coding a prefix holds no vector per component;
 * indexing makes a fresh tile. Only reading is supported.
 */
function lazyTiles(pp: PackedPlane, g: Geometry, ranks: Int32Array): QuantTile[] {
  const n = pp.nTiles;
  const iterate = function* (): Generator<QuantTile> {
    const pool = new VectorPool();
    for (let t = 0; t < n; t++) yield packedTile(pp, g, t, ranks, pool);
  };
  return new Proxy([] as QuantTile[], {
    get(target, key, receiver) {
      if (key === 'length') return n;
      if (key === Symbol.iterator) return iterate;
      if (typeof key === 'string') {
        const i = Number(key);
        if (Number.isInteger(i) && i >= 0 && String(i) === key)
          return i < n ? packedTile(pp, g, i, ranks, undefined) : undefined;
      }
      return Reflect.get(target, key, receiver);
    },
  });
}

/** Greedy order of the packed candidate (what orderCandidate gives, in typed arrays). */
interface PackedOrder {
  /** Flat tile (plane k, tile t → k·nTiles + t) and end rank of each block, in greedy order. */
  tile: Int32Array;
  endRank: Int32Array;
  /** cumCost[P]: estimated bits of the first P blocks. */
  cumCost: Float64Array;
}

/** Code-length classes of entry magnitudes (solve.ts costTable: ESC and magClass). */
const ESC = 16;

/**
 * solve.ts orderCandidate over the packed store, with the same arithmetic in the same order so the greedy
 * order is the same: costTable's counts (integers, exact in any order) and code lengths, vectorBits per
 * vector, hullBlocks per tile (pool adjacent violators), greedyOrder's sort (a total order: ratio, then
 * tile, then rank). The refit errors are dropped afterwards.
 */
function orderPacked(store: PackedPlane[], weights: number[]): PackedOrder {
  const counts = Array.from({ length: 4 }, () => new Float64Array(ESC + 1).fill(0.5));
  for (const pp of store)
    for (let t = 0; t < pp.nTiles; t++) {
      if (pp.first[t] === pp.first[t + 1]) continue;
      const { w, h } = tileRect(pp.g, t);
      const q = pp.bands[Math.floor(t / pp.g.cols)].q;
      for (let c = pp.first[t]; c < pp.first[t + 1]; c++) {
        let p = pp.at[c];
        // qu, then qv, each from a previous magnitude of 0; an escaped entry (|v| > 127) counts as ≥ ESC.
        for (const len of [h, w]) {
          let prev = 0;
          for (let j = 0; j < len; j++) {
            const a = Math.abs(q[p++]);
            counts[prev < 3 ? prev : 3][a < ESC ? a : ESC]++;
            prev = a;
          }
        }
      }
    }
  const table = counts.map((row) => {
    let total = 0;
    for (let a = 0; a < row.length; a++) total += row[a];
    return row.map((x, a) => -Math.log2(x / total) + (a > 0 ? 1 : 0));
  });
  let bTile = new Int32Array(1024);
  let bEnd = new Int32Array(1024);
  let bGain = new Float64Array(1024);
  let bCost = new Float64Array(1024);
  let nb = 0;
  const sg: number[] = [];
  const sc: number[] = [];
  const se: number[] = [];
  const pool = new VectorPool();
  store.forEach((pp, k) => {
    for (let t = 0; t < pp.nTiles; t++) {
      const f = pp.first[t];
      const n = pp.first[t + 1] - f;
      if (n === 0) continue;
      const { w, h } = tileRect(pp.g, t);
      const qu = pool.get(h, 0);
      const qv = pool.get(w, 1);
      const br = Math.floor(t / pp.g.cols);
      let m = 0;
      for (let i = 0; i < n; i++) {
        unpack(pp, br, f + i, qu, qv);
        const s = pp.sigma[f + i];
        let gain = weights[k] * (s * s - pp.err[f + i]);
        let cost = Math.max(vectorBits(qu, table) + vectorBits(qv, table) + 2, 1e-9);
        const end = i + 1;
        while (m > 0) {
          if (gain * sc[m - 1] >= sg[m - 1] * cost) {
            m--;
            gain = sg[m] + gain;
            cost = sc[m] + cost;
          } else break;
        }
        sg[m] = gain;
        sc[m] = cost;
        se[m] = end;
        m++;
      }
      while (m > 0 && !(sg[m - 1] > 0)) m--;
      if (nb + m > bTile.length) {
        bTile = grow(bTile, nb + m);
        bEnd = grow(bEnd, nb + m);
        bGain = grow(bGain, nb + m);
        bCost = grow(bCost, nb + m);
      }
      for (let j = 0; j < m; j++) {
        bTile[nb] = k * pp.nTiles + t;
        bEnd[nb] = se[j];
        bGain[nb] = sg[j];
        bCost[nb] = sc[j];
        nb++;
      }
    }
    pp.err = new Float64Array(0);
  });
  const ratio = new Float64Array(nb);
  for (let i = 0; i < nb; i++) ratio[i] = bGain[i] / bCost[i];
  const idx = new Uint32Array(nb);
  for (let i = 0; i < nb; i++) idx[i] = i;
  idx.sort((a, b) => ratio[b] - ratio[a] || bTile[a] - bTile[b] || bEnd[a] - bEnd[b]);
  const tileOut = new Int32Array(nb);
  const endOut = new Int32Array(nb);
  const cumCost = new Float64Array(nb + 1);
  for (let i = 0; i < nb; i++) {
    const b = idx[i];
    tileOut[i] = bTile[b];
    endOut[i] = bEnd[b];
    cumCost[i + 1] = cumCost[i] + bCost[b];
  }
  return { tile: tileOut, endRank: endOut, cumCost };
}

/** solve.ts prefixRanks over the packed order: ranks per [plane][tile] after the first P blocks. */
function prefixRanksPacked(store: PackedPlane[], order: PackedOrder, P: number): Int32Array[] {
  const ranks = store.map((pp) => new Int32Array(pp.nTiles));
  const n = store[0].nTiles;
  for (let k = 0; k < P && k < order.tile.length; k++) {
    const f = order.tile[k];
    const p = Math.floor(f / n);
    const t = f - p * n;
    if (order.endRank[k] > ranks[p][t]) ranks[p][t] = order.endRank[k];
  }
  return ranks;
}

/** solve.ts prefixForBytes: largest P whose estimated payload (bits·ratio/8) fits in `bytes`. */
function prefixForBytesPacked(cumCost: Float64Array, bytes: number, ratio: number): number {
  const bits = (bytes * 8) / ratio;
  let lo = 0;
  let hi = cumCost.length - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (cumCost[mid] <= bits) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

/** A probe within 0.4% under the budget ends the size search (solve.ts CLOSE_ENOUGH). */
const CLOSE_ENOUGH = 0.996;

/**
 * solve.ts refine over the packed order, step for step: the largest greedy prefix whose real size fits,
 * by secant steps on the size model and bisection. `size(P)` is the real file size at prefix P.
 */
function refinePacked(
  cumCost: Float64Array,
  budget: number,
  overhead: number,
  ratio0: number,
  size: (P: number) => number,
): { P: number; bytes: number } {
  const N = cumCost.length - 1;
  let lo = 0;
  let loBytes = overhead;
  let hi = N + 1;
  let ratio = ratio0;
  let guess = prefixForBytesPacked(cumCost, budget - overhead, ratio);
  for (let iter = 0; iter < 14 && hi - lo > 1; iter++) {
    if (!(guess > lo && guess < hi)) guess = (lo + hi) >> 1;
    const s = size(guess);
    if (s <= budget) {
      lo = guess;
      loBytes = s;
      if (s >= budget * CLOSE_ENOUGH) break;
    } else hi = guess;
    if (cumCost[guess] > 0 && s > overhead) ratio = ((s - overhead) * 8) / cumCost[guess];
    guess = prefixForBytesPacked(cumCost, (budget - overhead) * (s <= budget ? 1 : 0.995), ratio);
    if (guess >= hi) guess = hi - 1;
    if (guess <= lo) guess = lo + 1;
  }
  return { P: lo, bytes: loBytes };
}

/**
 * The spectral bound with the quiet tiles in: a quiet tile's σ₁ is at most √energy·(1 + roundoff), so only
 * the quiet tiles whose bound exceeds the maximum so far are factored again (from the scan's samples, the
 * same floats as in the band pass), and their σ₁ taken. Usually none: any tile cut inside its candidate
 * list has a σ above the dead zone, which is above every quiet tile's σ₁.
 */
function quietSpectral(
  store: PackedPlane[],
  g: Geometry,
  spectral: number,
  bandFloats: (y0: number, bh: number) => Float64Array[],
  meanStep: number,
): number {
  let best = spectral;
  const todo: Array<[number, number]> = [];
  store.forEach((pp, k) => {
    for (const t of pp.quiet) if (Math.sqrt(pp.energy[t]) * (1 + 1e-6) > best) todo.push([k, t]);
  });
  todo.sort((a, b) => a[1] - b[1] || a[0] - b[0]);
  let row = -1;
  let bands: Float64Array[] = [];
  for (const [k, t] of todo) {
    const r = Math.floor(t / g.cols);
    const y0 = r * g.tile;
    const bh = Math.min(g.tile, g.height - y0);
    if (r !== row) {
      bands = bandFloats(y0, bh).map((b) => b.slice());
      row = r;
    }
    const { x, w, h } = tileRect(g, t);
    const a = new Float64Array(w * h);
    for (let i = 0; i < h; i++) a.set(bands[k].subarray(i * g.width + x, i * g.width + x + w), i * w);
    const f = factorPlane(a, w, h, { tile: g.tile, meanRemoval: true, meanStep });
    const s = f.tiles[0].s;
    if (s.length > 0) best = Math.max(best, s[0]);
  }
  return best;
}
