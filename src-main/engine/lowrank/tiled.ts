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
 * Δ and the tile side come from encoding a centred crop (./centred-crop) at the same bits per pixel with
 * the full encoder (the same crop `--tile auto` already uses to pick a tile side). The full encoder instead
 * tries a few steps on every tile; with one step here, a file can be a little worse in PSNR than the whole
 * search would find, and never over the budget.
 *
 * Memory: the samples, the kept components in a packed store (./packed-store: one byte per vector entry,
 * typed arrays only, no object per component or vector) and O(width·tile) per band. The file is sized by coding its
 * planes from that store tile by tile, and PSNR/SSIM are measured band by band on the samples rebuilt
 * from it (SseStream, SsimStream), so neither a full-size float plane nor a full reconstruction is held.
 * Tiles whose energy is below the quantiser's dead zone ("quiet", see ./band-factor quietEnergy) skip the SVD.
 */
import type { Budget, DecodedImage } from '../../contract';
import { UsageError } from '../../contract/errors';
import { readImageHeader } from '../codec/image-file';
import type { QuantPlane } from '../codec/quantised';
import { rgbToYcbcr, YCBCR_ERROR_WEIGHTS } from '../colour';
import { factorBand, PRUNE_SLOPE, quietEnergy, quietSpectral, toFloat, usefulPrefix } from './band-factor';
import {
  buildCandidate,
  type Comp,
  collectComponents,
  costTable,
  fitPrefix,
  type PlaneInput,
  prefixForBytes,
} from './candidate';
import { centredCrop } from './centred-crop';
import type { SampleArray } from './decode-image';
import { encodeScan } from './encode';
import {
  budgetBytes,
  type EncodeOptions,
  type PlaneRankSummary,
  type ScanEncodeFigures,
} from './encode-options';
import { factorPlane } from './factorise';
import { imageWriter } from './image-writer';
import { orderPacked, prefixRanksPacked } from './packed-order';
import { appendBand, lazyTiles, newPackedPlane } from './packed-store';
import { measureRebuilt } from './tiled-measure';

/** A decoded scan whose planes are integer samples (Uint8Array for 8-bit, Uint16Array for 16-bit). */
export interface SampleImage extends Omit<DecodedImage, 'planes'> {
  planes: SampleArray[];
}

/** Scans above this many pixels take the tiled, integer-sample path by default (2^25 ≈ 33.5 MP). */
export const TILED_PIXELS = 1 << 25;

export interface TiledEncodeResult extends ScanEncodeFigures {
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
  const cropP = prefixForBytes(cropCand.cumCost, 2 * probe.bytes.length, 1);
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
  const build = imageWriter(img, opts, names);
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
  const size = (P: number) => {
    cancel();
    return build(planesAt(prefixRanksPacked(store, order, P))).length;
  };
  const overhead = size(0);
  if (overhead > byteBudget)
    throw new UsageError(
      `${img.file}: a budget of ${byteBudget} bytes is below the smallest possible file for this image (${overhead} bytes: header, tile means${colour ? ', three planes' : ''}${hasAlpha ? ', lossless alpha' : ''}); raise the budget or use a larger --tile`,
    );
  const { P } = fitPrefix(order.cumCost, byteBudget, overhead, 1, size);
  const ranksPT = prefixRanksPacked(store, order, P);
  const planes = planesAt(ranksPT);

  // 4. Write, then measure the samples rebuilt band by band from the components just coded (./tiled-measure).
  progress('write', 0.92);
  let bytes = build(planes);
  const fileHeader = readImageHeader(bytes, img.file, { compressors: opts.compressors }).header;
  progress('measure', 0.96);
  const { lossless, psnr, ssim, sse } = measureRebuilt(
    img,
    { store, geom, ranks: ranksPT, delta, stepScales, meanStep },
    cancel,
  );
  // The lossless flag changes the header only, not the samples.
  if (lossless) bytes = build(planes, true);
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
