/**
 * Robust estimate of additive white noise from the finest diagonal wavelet detail of an image.
 *
 * References
 * - D. L. Donoho, I. M. Johnstone, "Ideal spatial adaptation by wavelet shrinkage", Biometrika
 *   81(3):425–455, 1994. doi:10.1093/biomet/81.3.425. σ̂ = median(|d|)/0.6745 over the finest-scale
 *   wavelet coefficients d, which are mostly noise.
 * - A. Haar, "Zur Theorie der orthogonalen Funktionensysteme", Math. Ann. 69:331–371, 1910. The 2-D Haar
 *   diagonal detail (a − b − c + d)/2 of each 2×2 block is orthonormal, so white noise of variance σ²
 *   gives coefficients of variance σ².
 *
 * The diagonal (HH) detail cancels any pure row or column offset pattern exactly (a − b − c + d = 0 when
 * a = c, b = d, or a = b, c = d), so scanner banding does not inflate the estimate.
 */

import { type CodingGrid, codingGrid } from './noise-grid';
import { sortByKey } from './noise-sort';

/** Φ⁻¹(3/4): the median of |N(0,1)| (standard normal quantile; 0.6744897501960817 to double precision). */
export const MAD_TO_SIGMA = 0.6744897501960817;

/**
 * σ̂ of white noise in `plane` (width×height, row-major), in the plane's units.
 *
 * Edges and texture also put energy into the diagonal detail, which inflates a plain median. Because the
 * four Haar coefficients of a block are orthonormal projections, white Gaussian noise makes them
 * independent; so blocks are ranked by a texture measure built only from the other coefficients
 * (|LH| + |HL| and the differences of neighbouring LL), and the median of |HH| is taken over the
 * `keep` fraction with the least texture. The selection therefore does not bias the noise part of HH.
 * Blocks touching `clipLow`/`clipHigh` (e.g. 0 and 255) are skipped, because clipping removes noise there.
 * When the plane carries the 8×8 grid of JPEG coding (noise-grid.ts) at a phase where aligned blocks straddle
 * its boundaries, those blocks are skipped too (gridSkip); otherwise the result is what it was without the test.
 */
export function estimateNoiseSigma(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  clipLow = Number.NEGATIVE_INFINITY,
  clipHigh = Number.POSITIVE_INFINITY,
  keep = NOISE_KEEP_FRACTION,
): number {
  const blocks = haarBlocks(plane, width, height, clipLow, clipHigh);
  if (!blocks) return 0;
  const skip = gridSkip(codingGrid(plane, width, height));
  return skip ? sigmaOfBlocks(blocks, keep, skip) : sigmaOfBlocks(blocks, keep);
}

/**
 * σ̂ of white noise read one wavelet scale coarser: the same rule (sigmaOfBlocks) on the plane of 2×2 block
 * means, times 2. White noise of variance σ² gives the means variance σ²/4, so the result is σ again; noise
 * with more power at low frequencies than at high ones reads more (filtered noise, noise-psd-plan.ts): 3.5σ̂
 * through the 3×3 binomial kernel, 4.4σ̂ through the 5×5 Gaussian of σ = 1 (numpy 1.24.2 simulation on
 * 2048² samples, the ratio to the finest-scale σ̂). A mean over a block with a sample at or beyond a clip level
 * is set to that level, so that the coarse blocks holding it are skipped as clipped.
 */
export function coarseNoiseSigma(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  clipLow = Number.NEGATIVE_INFINITY,
  clipHigh = Number.POSITIVE_INFINITY,
): number {
  return scaleSigmas(plane, width, height, clipLow, clipHigh, 2)[1];
}

/**
 * σ̂ at `scales` dyadic scales, finest first: the finest as sigmaOfBlocks reads it (no grid test), each next one
 * on the 2×2 block means of the last plane, times 2 per step (coarseNoiseSigma); 0 where a plane has no blocks.
 */
export function scaleSigmas(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  clipLow: number,
  clipHigh: number,
  scales: number,
): number[] {
  const out: number[] = [];
  let p = plane;
  let w = width;
  let h = height;
  for (let j = 0; j < scales; j++) {
    const blocks = haarBlocks(p, w, h, clipLow, clipHigh);
    out.push(blocks ? 2 ** j * sigmaOfBlocks(blocks) : 0);
    if (j + 1 < scales) [p, w, h] = blockMeans(p, w, h, clipLow, clipHigh);
  }
  return out;
}

/** The plane of 2×2 block means; a block with a sample at or beyond a clip level gets that level. */
function blockMeans(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  clipLow: number,
  clipHigh: number,
): [Float64Array, number, number] {
  const bw = width >> 1;
  const bh = height >> 1;
  const means = new Float64Array(bw * bh);
  for (let by = 0; by < bh; by++)
    for (let bx = 0; bx < bw; bx++) {
      const i = 2 * by * width + 2 * bx;
      const q = [plane[i], plane[i + 1], plane[i + width], plane[i + width + 1]];
      const low = Math.min(...q);
      const high = Math.max(...q);
      means[by * bw + bx] =
        low <= clipLow ? clipLow : high >= clipHigh ? clipHigh : (q[0] + q[1] + q[2] + q[3]) / 4;
    }
  return [means, bw, bh];
}

/**
 * Block phases to leave out: the block column (bx mod 4) and row (by mod 4) whose 2×2 blocks straddle a
 * boundary of `grid`, −1 on an axis where the boundaries fall between aligned blocks (an odd window phase);
 * null when there is no grid or it straddles no aligned block.
 */
function gridSkip(grid: CodingGrid | null): { x: number; y: number } | null {
  if (!grid) return null;
  const x = grid.x % 2 === 0 ? grid.x / 2 : -1;
  const y = grid.y % 2 === 0 ? grid.y / 2 : -1;
  return x < 0 && y < 0 ? null : { x, y };
}

/**
 * σ̂ from the `keep` fraction of least-textured blocks (estimateNoiseSigma's rule; `blocks` is left as it was).
 * With `skip` (gridSkip), the blocks at those phases are left out first and the fraction is of the others.
 */
export function sigmaOfBlocks(
  blocks: HaarBlocks,
  keep = NOISE_KEEP_FRACTION,
  skip?: { x: number; y: number },
): number {
  const { hh, integral, bw } = blocks;
  let idx = scoreOrder(blocks);
  if (skip) {
    const kept = new Int32Array(idx.length);
    let m = 0;
    for (const i of idx) if ((i % bw) % 4 !== skip.x && Math.floor(i / bw) % 4 !== skip.y) kept[m++] = i;
    idx = kept.subarray(0, m);
  }
  const n = Math.max(1, Math.floor(idx.length * keep));
  const v = new Float64Array(n);
  for (let k = 0; k < n; k++) v[k] = hh[idx[k]];
  return (integral ? groupedMedian(v) : exactMedian(v)) / 2 / MAD_TO_SIGMA;
}

const byScore = new WeakMap<HaarBlocks, Int32Array>();
/** The blocks' indices ordered by texture score, ties by index (computed once per `blocks`; do not modify it). */
export function scoreOrder(blocks: HaarBlocks): Int32Array {
  let order = byScore.get(blocks);
  if (!order) {
    order = sortByKey(blocks.idx, blocks.score);
    byScore.set(blocks, order);
  }
  return order;
}

/** The 2×2 Haar blocks of a plane: block mean, texture score, |HH|·2, and the unclipped blocks. */
export interface HaarBlocks {
  /** Mean of the four pixels of each block. */
  mean: Float64Array;
  /** Texture score from |LH| + |HL| and the neighbouring LL differences (independent of HH for white noise). */
  score: Float64Array;
  /** |a − b − c + d| = 2·|HH| of each block. */
  hh: Float64Array;
  /** The other two detail coefficients of each block, (a + b − c − d)/2 and (a − b + c − d)/2. */
  lh: Float64Array;
  hl: Float64Array;
  /** Blocks per row, ⌊width/2⌋. */
  bw: number;
  /** Indices of the blocks that touch neither clip level, in raster order. */
  idx: Int32Array;
  /** True when every |HH|·2 is an integer (integer input): medians then use the grouped-data rule. */
  integral: boolean;
}

/**
 * Haar blocks of `plane` (null when the plane is smaller than 4×4 or every block touches a clip level). One
 * pass over the pixels for the coefficients, one over the blocks for the score (which needs the next block
 * to the right and below). The score's LL differences are taken on the means: LL = 2·mean and the factor 2
 * is exact in binary floating point, so |ΔLL|/2 = |Δmean| to the bit.
 */
export function haarBlocks(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  clipLow = Number.NEGATIVE_INFINITY,
  clipHigh = Number.POSITIVE_INFINITY,
): HaarBlocks | null {
  const bw = width >> 1;
  const bh = height >> 1;
  if (bw < 2 || bh < 2) return null;
  const mean = new Float64Array(bw * bh);
  const score = new Float64Array(bw * bh);
  const hh = new Float64Array(bw * bh);
  const lhs = new Float64Array(bw * bh);
  const hls = new Float64Array(bw * bh);
  const ok = new Uint8Array(bw * bh);
  let integral = true;
  for (let by = 0; by < bh; by++) {
    const r0 = 2 * by * width;
    const r1 = r0 + width;
    for (let bx = 0; bx < bw; bx++) {
      const a = plane[r0 + 2 * bx];
      const b = plane[r0 + 2 * bx + 1];
      const c = plane[r1 + 2 * bx];
      const d = plane[r1 + 2 * bx + 1];
      const i = by * bw + bx;
      mean[i] = (a + b + c + d) / 2 / 2;
      const lh = (a + b - c - d) / 2;
      const hl = (a - b + c - d) / 2;
      score[i] = Math.abs(lh) + Math.abs(hl);
      lhs[i] = lh;
      hls[i] = hl;
      const t = Math.abs(a - b - c + d);
      hh[i] = t;
      if (integral && t !== Math.round(t)) integral = false;
      ok[i] =
        a <= clipLow ||
        b <= clipLow ||
        c <= clipLow ||
        d <= clipLow ||
        a >= clipHigh ||
        b >= clipHigh ||
        c >= clipHigh ||
        d >= clipHigh
          ? 0
          : 1;
    }
  }
  const ids = new Int32Array(bw * bh);
  let count = 0;
  for (let by = 0; by < bh; by++)
    for (let bx = 0; bx < bw; bx++) {
      const i = by * bw + bx;
      if (!ok[i]) continue;
      const gx = bx + 1 < bw ? Math.abs(mean[i + 1] - mean[i]) : Math.abs(mean[i] - mean[i - 1]);
      const gy = by + 1 < bh ? Math.abs(mean[i + bw] - mean[i]) : Math.abs(mean[i] - mean[i - bw]);
      score[i] += gx + gy;
      ids[count++] = i;
    }
  if (count === 0) return null;
  return { mean, score, hh, lh: lhs, hl: hls, bw, idx: ids.subarray(0, count), integral };
}

/**
 * Fraction of least-textured blocks whose diagonal detail is used. Fitted on: camera, moon, text and page
 * from test/fixtures/images with Gaussian noise σ = 5, 10, 20 (the cases of test/clean/noise-estimate.test.ts,
 * first clean commit 87d461e).
 */
const NOISE_KEEP_FRACTION = 0.5;

export function exactMedian(v: Float64Array): number {
  v.sort();
  const n = v.length;
  return n % 2 ? v[(n - 1) >> 1] : (v[n / 2 - 1] + v[n / 2]) / 2;
}

/**
 * Median of integer-valued |x| treated as rounded continuous data: value 0 stands for [0, ½), value k ≥ 1
 * for [k − ½, k + ½); the median is interpolated inside its bin (the grouped-data median of descriptive
 * statistics, common practice). Without this, 8-bit data would quantise σ̂ in steps of about 0.74.
 */
export function groupedMedian(v: Float64Array): number {
  let max = 0;
  for (let i = 0; i < v.length; i++) if (v[i] > max) max = v[i];
  const hist = new Float64Array(max + 1);
  for (let i = 0; i < v.length; i++) hist[v[i]]++;
  const half = v.length / 2;
  let below = 0;
  for (let k = 0; k <= max; k++) {
    if (below + hist[k] >= half) {
      const lo = k === 0 ? 0 : k - 0.5;
      const widthBin = k === 0 ? 0.5 : 1;
      return lo + ((half - below) / hist[k]) * widthBin;
    }
    below += hist[k];
  }
  return max;
}
