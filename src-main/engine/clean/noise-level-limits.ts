/**
 * Level sets at the clipping limits of a scan (0 and the top value): flat regions whose noise is cut by the
 * limit, such as a black background or blown-out paper, measured so that the clipped model of noise-clip.ts can
 * use them.
 *
 * References
 * - A. Foi, M. Trimeche, V. Katkovnik, K. Egiazarian, "Practical Poissonian–Gaussian noise modeling and
 *   fitting for single-image raw-data", IEEE Trans. Image Process. 17(10):1737–1754, 2008.
 *   doi:10.1109/TIP.2008.2001399. The clipped observation model: level sets measure the mean and standard
 *   deviation of the clipped data, and the fit relates them to the unclipped line (noise-clip.ts).
 * - A. Foi, "Clipped noisy images: heteroskedastic modeling and practical denoising", Signal Processing
 *   89(12):2609–2629, 2009. doi:10.1016/j.sigpro.2009.04.035. Sec. 2: clipped data are still informative
 *   about the noise of the unclipped variable.
 *
 * Why these blocks need their own sets. Away from the limits the four Haar coefficients of a block are
 * independent under Gaussian noise, so picking blocks by LL, LH and HL (the flatness test, noise-flat.ts) and
 * ordering them by a mean that includes their own LL does not bias their HH. At a limit that fails: a block of
 * four zeros has LH = HL = HH = 0, so the blocks that pass the test and sort lowest are those whose HH is 0.
 * Measured on scikit-image's Shepp–Logan phantom (58 % of its pixels are 0) with noise 0.2·x + 2: the level
 * sets on the background read σ̂² = 0.03 to 3.3 where the clipped variance is 0.74, and b came out 54 % low.
 * Here a block is tested and ordered on its eight neighbours only (the `ring` statistic of noise-flat.ts, χ²₅
 * under noise on a plane, and their 32-pixel mean), which do not depend on the block's own pixels; its noise is
 * the plain mean of HH² (for independent pixels of one distribution that is the variance of the clipped data,
 * with no assumption on its shape, unlike the trimmed mean that assumes a normal law), its level the mean of its
 * own four pixels (the clipped expectation), and the spread of σ̂² is measured from the blocks (clipped noise has
 * heavier tails than the normal law's n·Var σ̂²/σ⁴ = 2).
 */

import type { HaarBlocks } from './noise-estimate';
import type { NoiseLevelPoint } from './noise-level-ml';
import { sortByKey } from './noise-sort';

/** Blocks within this many σ (model at their ring mean) of 0 or the top value are measured here (chosen here). */
export const LIMIT_SIGMAS = 2;
/** χ²₅ 90 % quantile (scipy 1.10.1 stats.chi2.ppf(0.9, 5) = 9.23636): the ring test keeps 90 % of pure-noise blocks. */
export const RING_QUANTILE = 9.23636;
/** Blocks per level set at a limit, at least (as MIN_FLAT_PER_LEVEL in noise-level.ts). */
const MIN_PER_LEVEL = 200;
/** Level sets per limit, at most (chosen here: a limit is one level, split only to follow a gentle ramp). */
const MAX_LEVELS = 4;

/**
 * The mean of the 32 pixels of the eight blocks around each block of `ids` (from `total` of noise-flat.ts and
 * the blocks' own means), indexed by block; 0 elsewhere.
 */
export function ringMeans(blocks: HaarBlocks, total: Float64Array, ids: Int32Array): Float64Array {
  const out = new Float64Array(blocks.mean.length);
  for (let k = 0; k < ids.length; k++) {
    const i = ids[k];
    out[i] = (total[i] - 2 * blocks.mean[i]) / 16;
  }
  return out;
}

/**
 * Level sets of the blocks `ids` (already tested flat on their ring), split into those nearer 0 and those
 * nearer `top`, each ordered by its ring mean (`rm`, from ringMeans) and cut into sets of at least
 * MIN_PER_LEVEL blocks. Each point carries its own spread (n·Var σ̂²/σ̂⁴ from the blocks' HH⁴). The points come
 * unused: the fit takes them in through the clipped model only.
 */
export function limitPoints(
  blocks: HaarBlocks,
  rm: Float64Array,
  ids: Int32Array,
  top: number,
): NoiseLevelPoint[] {
  let nLow = 0;
  for (let k = 0; k < ids.length; k++) if (rm[ids[k]] < top / 2) nLow++;
  const low = new Int32Array(nLow);
  const high = new Int32Array(ids.length - nLow);
  let l = 0;
  let h = 0;
  for (let k = 0; k < ids.length; k++) {
    const i = ids[k];
    if (rm[i] < top / 2) low[l++] = i;
    else high[h++] = i;
  }
  return [...side(blocks, rm, low), ...side(blocks, rm, high)];
}

function side(blocks: HaarBlocks, rm: Float64Array, ids: Int32Array): NoiseLevelPoint[] {
  const m = ids.length;
  const levels = Math.min(MAX_LEVELS, Math.floor(m / MIN_PER_LEVEL));
  if (levels < 1) return [];
  // ids come in increasing order of the full neighbourhood mean; sortByKey keeps ties in that order.
  const order = sortByKey(ids, rm);
  const out: NoiseLevelPoint[] = [];
  for (let l = 0; l < levels; l++) {
    const from = Math.floor((l * m) / levels);
    const to = Math.floor(((l + 1) * m) / levels);
    let level = 0;
    let s2 = 0;
    let s4 = 0;
    for (let k = from; k < to; k++) {
      const i = order[k];
      // hh = 2·|HH|, so HH² = hh²/4.
      const h2 = (blocks.hh[i] * blocks.hh[i]) / 4;
      level += blocks.mean[i];
      s2 += h2;
      s4 += h2 * h2;
    }
    const n = to - from;
    const v = s2 / n;
    const spread = v > 0 ? Math.max(2, s4 / n / (v * v) - 1) : 2;
    out.push({ level: level / n, sigma: Math.sqrt(v), count: n, used: false, spread });
  }
  return out;
}
