/**
 * The noise level function σ²(x) = a·x + b of a scan, estimated from the scan itself.
 *
 * Reference
 * - A. Foi, M. Trimeche, V. Katkovnik, K. Egiazarian, "Practical Poissonian–Gaussian noise modeling and
 *   fitting for single-image raw-data", IEEE Trans. Image Process. 17(10):1737–1754, 2008.
 *   doi:10.1109/TIP.2008.2001399. Their Sec. II: the model σ²(y) = a·y + b; local estimates of the
 *   expectation (wavelet approximation) and of the standard deviation (wavelet detail) over the smooth
 *   parts of the image, collected on level sets of the expectation; Sec. III: a fit of the level-set
 *   estimates to the model (there, maximum likelihood; section numbers from memory).
 *
 * This is a robust variant of the same steps, built on the Haar blocks that the σ estimate already uses
 * (noise-estimate.ts): the block mean is the local expectation, the finest diagonal detail |HH| the local
 * noise (it cancels row and column stripes exactly). Blocks are sorted by their mean into level sets of
 * equal count; in each, the least-textured half is kept (ranked by the other Haar coefficients, independent
 * of HH for white noise) and σ̂ = median|HH|/0.6745. The points (level, σ̂²) are fitted by iteratively
 * reweighted least squares with weights n/σ⁴ (the variance of a variance estimate is ∝ σ⁴/n), and points
 * more than 3 standard errors above the fit are dropped one by one (texture only ever adds variance).
 * The median replaces the paper's sample standard deviations: its efficiency is 1/1.36 of theirs for
 * Gaussian data (P. J. Huber, "Robust Statistics", Wiley 1981; from memory) but content does not pull it.
 */
import { exactMedian, groupedMedian, haarBlocks, MAD_TO_SIGMA } from './noise-estimate';

/** One level set: its mean intensity, the noise σ measured there, and how many blocks gave it. */
interface NoiseLevelPoint {
  level: number;
  sigma: number;
  count: number;
  /** False when the robust fit dropped this point. */
  used: boolean;
}

export interface NoiseLevelFit {
  a: number;
  b: number;
  /** Standard errors of a and b from the weighted least-squares fit. */
  seA: number;
  seB: number;
  points: NoiseLevelPoint[];
  /** 5th and 95th percentiles of the block means (the intensity range the scan covers). */
  low: number;
  high: number;
}

/** Level sets per plane, at most. */
const MAX_LEVELS = 32;
/** Blocks per level set, at least (a median of 200 |HH| values has a relative error of about 9 %). */
const MIN_BLOCKS_PER_LEVEL = 400;
/** Share of least-textured blocks kept in each level set (as NOISE_KEEP_FRACTION in noise-estimate.ts). */
const KEEP = 0.5;
/** Variance of a median-based σ̂² relative to n/(2σ⁴) (1.36 for the MAD; Huber 1981, from memory). */
const MAD_EFFICIENCY = 1.36;
/** Level sets closer than this many σ̂ to 0 or maxValue are not fitted (clipping; common practice). */
const CLIP_GUARD = 3;
/** Points more than this many standard errors above the fit are dropped, one at a time (chosen here). */
const OUTLIER_SE = 3;

/**
 * Fit σ²(x) = a·x + b to `plane` (values 0…maxValue). Blocks touching 0 or maxValue are skipped (clipping
 * removes noise there). Returns null when the plane has too few unclipped blocks for three level sets.
 */
export function fitNoiseLevel(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  maxValue: number,
): NoiseLevelFit | null {
  const blocks = haarBlocks(plane, width, height, 0, maxValue);
  if (!blocks) return null;
  const { idx, mean, score, hh, integral } = blocks;
  const levels = Math.min(MAX_LEVELS, Math.floor(idx.length / MIN_BLOCKS_PER_LEVEL));
  if (levels < 3) return null;
  idx.sort((p, q) => mean[p] - mean[q] || p - q);
  const points: NoiseLevelPoint[] = [];
  for (let l = 0; l < levels; l++) {
    const set = idx.slice(Math.floor((l * idx.length) / levels), Math.floor(((l + 1) * idx.length) / levels));
    set.sort((p, q) => score[p] - score[q] || p - q);
    const n = Math.max(1, Math.floor(set.length * KEEP));
    const v = new Float64Array(n);
    let level = 0;
    for (let k = 0; k < n; k++) {
      v[k] = hh[set[k]];
      level += mean[set[k]];
    }
    const med = integral ? groupedMedian(v) : exactMedian(v);
    const sigma = med / 2 / MAD_TO_SIGMA;
    const lv = level / n;
    // Near 0 or maxValue, clipping removes part of the noise and the skipped blocks bias the rest.
    const clear = lv - CLIP_GUARD * sigma > 0 && lv + CLIP_GUARD * sigma < maxValue;
    points.push({ level: lv, sigma, count: n, used: clear });
  }
  if (points.filter((p) => p.used).length < 3) return null;
  // Texture that survives the selection only adds variance, so the fit is trimmed from above: the point
  // furthest above the fit (in standard errors) is dropped while it lies more than OUTLIER_SE above, one at
  // a time. Below-fit points are left alone (no mechanism pulls a level set's noise down except clipping,
  // which is guarded against).
  let fit = weightedFit(points);
  for (;;) {
    let worst: NoiseLevelPoint | null = null;
    let worstZ = OUTLIER_SE;
    for (const p of points) {
      if (!p.used) continue;
      const model = Math.max(1e-12, fit.a * p.level + fit.b);
      const z = (p.sigma * p.sigma - model) / (model * Math.sqrt((2 * MAD_EFFICIENCY) / p.count));
      if (z > worstZ) {
        worstZ = z;
        worst = p;
      }
    }
    if (!worst || points.filter((p) => p.used).length <= 3) break;
    worst.used = false;
    fit = weightedFit(points);
  }
  const final = fit;
  const pct = (q: number) => mean[idx[Math.min(idx.length - 1, Math.floor(q * idx.length))]];
  return { ...final, points, low: pct(0.05), high: pct(0.95) };
}

/**
 * Iteratively reweighted least squares of σ̂² = a·level + b over the used points, weights n/σ⁴ from the
 * current model (first pass: from the measured σ̂). a is kept ≥ 0: a negative slope is noise of the fit, and
 * the model falls back to a constant (Gaussian) variance.
 */
function weightedFit(points: NoiseLevelPoint[]): { a: number; b: number; seA: number; seB: number } {
  const used = points.filter((p) => p.used);
  let a = 0;
  let b = 0;
  let cov = { aa: Number.POSITIVE_INFINITY, bb: Number.POSITIVE_INFINITY };
  for (let it = 0; it < 6; it++) {
    let sw = 0;
    let sx = 0;
    let sy = 0;
    let sxx = 0;
    let sxy = 0;
    for (const p of used) {
      const v = it === 0 ? p.sigma * p.sigma : a * p.level + b;
      const w = p.count / (2 * MAD_EFFICIENCY * Math.max(v, 1e-6) ** 2);
      const y = p.sigma * p.sigma;
      sw += w;
      sx += w * p.level;
      sy += w * y;
      sxx += w * p.level * p.level;
      sxy += w * p.level * y;
    }
    const det = sw * sxx - sx * sx;
    if (!(det > 0)) {
      a = 0;
      b = sy / sw;
      cov = { aa: Number.POSITIVE_INFINITY, bb: 1 / sw };
      break;
    }
    a = (sw * sxy - sx * sy) / det;
    b = (sxx * sy - sx * sxy) / det;
    cov = { aa: sw / det, bb: sxx / det };
    if (a < 0) {
      a = 0;
      b = sy / sw;
      cov = { aa: sw / det, bb: 1 / sw };
    }
  }
  return { a, b, seA: Math.sqrt(cov.aa), seB: Math.sqrt(cov.bb) };
}

/** σ(x) of a fitted or given model, clamped at 0 where a·x + b < 0. */
export function modelSigma(model: { a: number; b: number }, x: number): number {
  return Math.sqrt(Math.max(0, model.a * x + model.b));
}
