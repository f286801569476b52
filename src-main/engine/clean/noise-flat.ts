/**
 * A flatness test for the 2×2 Haar blocks of a plane, calibrated on the noise itself: which blocks lie in a
 * neighbourhood where the image is a plane (or flat) up to noise, so that their diagonal detail HH measures
 * noise only.
 *
 * Reference
 * - A. Foi, M. Trimeche, V. Katkovnik, K. Egiazarian, "Practical Poissonian–Gaussian noise modeling and
 *   fitting for single-image raw-data", IEEE Trans. Image Process. 17(10):1737–1754, 2008.
 *   doi:10.1109/TIP.2008.2001399. Sec. III: the local estimates are taken only where the image is smooth;
 *   edges and their neighbourhood are segmented away first. This file is that segmentation, done as a
 *   statistical test instead of the paper's edge detector on a smoothed image.
 *
 * The test. The four Haar coefficients of a block (LL = (p+q+r+s)/2, LH, HL, HH) are an orthonormal transform,
 * so white noise of variance σ² gives each of them variance σ², independently (and independently of the HH
 * used for σ). Over the 3×3 neighbourhood of a block, the nine LL values are fitted with a plane
 * (least squares on the grid −1, 0, 1; three parameters); the residual sum of squares plus LH² + HL² of the
 * centre block is, for noise alone on a flat image, σ²·χ² with 6 + 2 = 8 degrees of freedom. Edges, lines and
 * texture at the scale of a few pixels raise it. A ramp of slope g grey levels per pixel adds 2g² through LH
 * and HL, which is left in on purpose: taking out the slope the plane predicts for them was measured, and it
 * let steep, curved regions in (gel-scan: the SE of b tripled and one case left the Poisson–Gaussian path);
 * curvature is what HH itself sees. The test
 * never looks at the centre block's HH, so keeping or dropping a block does not bias the noise measured there.
 */

import { erfc } from './noise-clip';
import type { HaarBlocks } from './noise-estimate';

/**
 * The statistic of every block (`stat`, bw·bh values, bw = ⌊width/2⌋, row-major; +∞ on the outer ring of
 * blocks, which has no full neighbourhood; divided by σ² at the block's level it is a χ²₈ variable under noise
 * alone) and the mean of the 6×6 pixels around it (`smooth`). The level sets are ordered by `smooth`, not by
 * the block's own 2×2 mean: sorted by a noisy level, one flat region would spread over several level sets
 * at one true variance (errors in the variables), which flattens the fitted slope; the 36-pixel mean has a
 * third of the 4-pixel mean's noise. `total` = 18·`smooth` (the sum of the nine LL values) is the same order as
 * a sort key: on integer data it is a multiple of ½, so its float64 pattern ends in zero bits and a radix sort
 * skips half its passes (noise-sort.ts).
 *
 * `ring` is the residual sum of squares of the plane fitted to the eight neighbouring LL values without the
 * centre block (5 degrees of freedom: σ²·χ²₅ under noise alone on a plane; +∞ on the outer ring). It does not
 * depend on the centre block's pixels at all, which matters where the data is clipped at 0 or at the top: there
 * the four coefficients of a block are no longer independent (a block of four zeros has LH = HL = HH = 0), so a
 * test on the centre's LH, HL or LL would pick blocks by their HH (noise-level-limits.ts).
 */
export function flatnessStatistic(blocks: HaarBlocks): {
  stat: Float64Array;
  smooth: Float64Array;
  total: Float64Array;
  ring: Float64Array;
} {
  const { bw, lh: lhs, hl: hls } = blocks;
  const bh = blocks.mean.length / bw;
  const ll = blocks.mean;
  const out = new Float64Array(bw * bh).fill(Number.POSITIVE_INFINITY);
  const smooth = new Float64Array(bw * bh);
  const total = new Float64Array(bw * bh);
  const ring = new Float64Array(bw * bh).fill(Number.POSITIVE_INFINITY);
  for (let by = 1; by + 1 < bh; by++)
    for (let bx = 1; bx + 1 < bw; bx++) {
      const i = by * bw + bx;
      let sum = 0;
      let sq = 0;
      let gx = 0;
      let gy = 0;
      for (let dy = -1; dy <= 1; dy++)
        for (let dx = -1; dx <= 1; dx++) {
          const v = 2 * ll[i + dy * bw + dx];
          sum += v;
          sq += v * v;
          gx += dx * v;
          gy += dy * v;
        }
      // Plane fit on the 3×3 grid: Σx² = Σy² = 6, so RSS = Σv² − (Σv)²/9 − gx²/6 − gy²/6.
      const rss = sq - (sum * sum) / 9 - (gx * gx) / 6 - (gy * gy) / 6;
      out[i] = Math.max(0, rss) + lhs[i] * lhs[i] + hls[i] * hls[i];
      smooth[i] = sum / 18;
      total[i] = sum;
      // The same plane fit on the eight neighbours alone (the centre has dx = dy = 0, so gx and gy stand).
      const c = 2 * ll[i];
      ring[i] = Math.max(0, sq - c * c - ((sum - c) * (sum - c)) / 8 - (gx * gx) / 6 - (gy * gy) / 6);
    }
  return { stat: out, smooth, total, ring };
}

/** Cut-off of the trimmed variance, in units of the median-based σ̂ (chosen here; 0.27 % of pure noise is cut). */
const TRIM_CUT = 3;
/** P(|z| < c) and E[z²; |z| < c]/P(|z| < c) for the standard normal z (truncated normal moments, common practice). */
const TRIM_P = 1 - erfc(TRIM_CUT / Math.SQRT2);
const TRIM_KAPPA =
  1 - (2 * TRIM_CUT * Math.exp(-0.5 * TRIM_CUT * TRIM_CUT)) / Math.sqrt(2 * Math.PI) / TRIM_P;
/**
 * n·Var σ̂²/σ⁴ of trimmedVariance on white Gaussian noise: 1.83 with a known cut-off (truncated-normal
 * moments), 2.32 with the cut-off at 3 median-based σ̂ as here (numpy 1.24.2 simulation, default_rng(1),
 * 20 000 sets of n = 400; its mean was 0.9975σ²). The median-based σ̂² has 5.44 (noise-level-ml.ts).
 */
export const TRIMMED_SPREAD = 2.32;

/**
 * Variance of noise from the values 2·|HH| of flat blocks (`twiceAbs`): the mean of HH² over the values below
 * TRIM_CUT·σ̂₀ (σ̂₀ = `sigma0`, the median-based estimate), divided by TRIM_KAPPA so that it is unbiased for
 * Gaussian noise. On integer data it keeps the rounding variance in, as the line's b does. Its spread is
 * 2.32σ⁴/n against 5.44σ⁴/n for the median (TRIMMED_SPREAD): a level set gives the same precision with
 * 2.3 times fewer blocks, which matters once the flatness test has removed most of them.
 */
export function trimmedVariance(twiceAbs: Float64Array, sigma0: number): number {
  const cut = 2 * TRIM_CUT * sigma0;
  let s = 0;
  let n = 0;
  for (let k = 0; k < twiceAbs.length; k++)
    if (twiceAbs[k] < cut) {
      s += twiceAbs[k] * twiceAbs[k];
      n++;
    }
  return n > 0 ? s / 4 / n / TRIM_KAPPA : sigma0 * sigma0;
}
