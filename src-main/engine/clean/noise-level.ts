/**
 * The noise level function σ²(x) = a·x + b of a scan, estimated from the scan itself.
 *
 * Reference
 * - A. Foi, M. Trimeche, V. Katkovnik, K. Egiazarian, "Practical Poissonian–Gaussian noise modeling and
 *   fitting for single-image raw-data", IEEE Trans. Image Process. 17(10):1737–1754, 2008.
 *   doi:10.1109/TIP.2008.2001399. Sec. II: the model σ²(y) = a·y + b; Sec. III: local estimates of the
 *   expectation (wavelet approximation) and of the standard deviation (wavelet detail) on the smooth part of
 *   the image only (edges and texture are segmented away first), collected on level sets of the expectation;
 *   Sec. IV: the maximum-likelihood fit of the level-set estimates (noise-level-ml.ts).
 *
 * The wavelet is the Haar one that the σ estimate already uses (noise-estimate.ts): the block mean is the
 * local expectation, the finest diagonal detail |HH| the local noise (it cancels row and column stripes
 * exactly). Blocks are sorted by their mean into level sets of equal count; in each, the least-textured half
 * is kept (ranked by |LH| + |HL| and the neighbouring LL differences, independent of HH for white noise) and
 * σ̂ = median|HH|/0.6745 (the median instead of the paper's sample standard deviation: content that survives
 * the selection does not pull it). This per-level selection stands in for the paper's segmentation. A global
 * one (keep a block when its texture score is below the median score of white noise of the model's σ at its
 * mean, iterated from this first model) was measured on 13 images × 3 noise levels and did not fit a or b
 * better (median error of a 10–20 % either way; on textured and narrow-range images it was worse), so it is
 * not used.
 *
 * Rounding to integers adds the variance of uniform quantisation, 1/12 grey level² (common practice), to the
 * noise of every pixel and so to every |HH|: the fitted b is the variance of the stored data at x = 0,
 * rounding included.
 */

import { declipPoints } from './noise-clip';
import { exactMedian, groupedMedian, type HaarBlocks, haarBlocks, MAD_TO_SIGMA } from './noise-estimate';
import { fitLevelsTrimmed, type LevelFit, type NoiseLevelPoint } from './noise-level-ml';

export interface NoiseLevelFit {
  a: number;
  b: number;
  /** Standard errors of a and b (inverse Fisher information, widened by over-dispersion) and their covariance. */
  seA: number;
  seB: number;
  covAB: number;
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
/** Variance of rounding to integers, uniform on ±½ (common practice). */
const ROUNDING_VARIANCE = 1 / 12;
/** First fit: level sets closer than this many σ to 0 or maxValue are left out (clipping; common practice). */
const CLIP_GUARD = 3;
/** Refits through the clipped model (noise-clip.ts); a and b settle to 1e-6 in 3–4 on clipped test ramps. */
const DECLIP_STEPS = 6;

/**
 * Fit σ²(x) = a·x + b to `plane` (values 0…maxValue, stored clipped to that range). Every block is used,
 * those touching 0 or maxValue too: level sets near the limits are fitted through the clipped model
 * (noise-clip.ts), so they neither drop out nor bend the line. Returns null when the plane has too few
 * blocks for three level sets.
 */
export function fitNoiseLevel(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  maxValue: number,
): NoiseLevelFit | null {
  const blocks = haarBlocks(plane, width, height);
  if (!blocks) return null;
  const { idx, mean } = blocks;
  const sorted = idx.slice().sort((p, q) => mean[p] - mean[q] || p - q);
  const best = fitSelection(blocks, levelSets(sorted, blocks.score), maxValue);
  if (!best) return null;
  const pct = (q: number) => mean[sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))]];
  return { ...best.fit, points: best.points, low: pct(0.05), high: pct(0.95) };
}

/** Split blocks ordered by mean into level sets of equal count; each keeps its least-textured KEEP share. */
function levelSets(sorted: number[], score: Float64Array): number[][] {
  const levels = Math.min(MAX_LEVELS, Math.floor(sorted.length / MIN_BLOCKS_PER_LEVEL));
  const sets: number[][] = [];
  for (let l = 0; l < levels; l++) {
    const set = sorted.slice(
      Math.floor((l * sorted.length) / levels),
      Math.floor(((l + 1) * sorted.length) / levels),
    );
    set.sort((p, q) => score[p] - score[q] || p - q);
    sets.push(set.slice(0, Math.max(1, Math.floor(set.length * KEEP))));
  }
  return sets;
}

/**
 * σ̂ and mean level of each set, then the trimmed maximum-likelihood fit: first without the sets near the
 * limits (CLIP_GUARD), then repeatedly through the clipped model of the last fit (all sets, moved to their
 * unclipped level and variance), until a and b settle.
 */
function fitSelection(
  blocks: HaarBlocks,
  sets: number[][],
  maxValue: number,
): { fit: LevelFit; points: NoiseLevelPoint[] } | null {
  if (sets.length < 3) return null;
  const { mean, hh, integral } = blocks;
  const raw: NoiseLevelPoint[] = sets.map((set) => {
    const v = new Float64Array(set.length);
    let level = 0;
    for (let k = 0; k < set.length; k++) {
      v[k] = hh[set[k]];
      level += mean[set[k]];
    }
    const sigma = (integral ? groupedMedian(v) : exactMedian(v)) / 2 / MAD_TO_SIGMA;
    return { level: level / set.length, sigma, count: set.length, used: true };
  });
  // On integer data a σ̂² below the rounding variance means the noise is not resolved there (flat, noiseless).
  const keep = raw.map((p) => !integral || p.sigma * p.sigma >= ROUNDING_VARIANCE);
  let points = raw.map((p, i) => ({
    ...p,
    used: keep[i] && p.level - CLIP_GUARD * p.sigma > 0 && p.level + CLIP_GUARD * p.sigma < maxValue,
  }));
  let fit = fitLevelsTrimmed(points);
  for (let step = 0; fit && step < DECLIP_STEPS; step++) {
    const next = declipPoints(raw, keep, fit, maxValue);
    const refit = fitLevelsTrimmed(next);
    if (!refit) break;
    const settled =
      Math.abs(refit.a - fit.a) <= 1e-6 * (1 + fit.a) &&
      Math.abs(refit.b - fit.b) <= 1e-6 * (1 + Math.abs(fit.b));
    fit = refit;
    points = next;
    if (settled) break;
  }
  return fit ? { fit, points } : null;
}

/** σ(x) of a fitted or given model, clamped at 0 where a·x + b < 0. */
export function modelSigma(model: { a: number; b: number }, x: number): number {
  return Math.sqrt(Math.max(0, model.a * x + model.b));
}
