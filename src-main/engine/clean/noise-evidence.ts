/**
 * Whether a white-noise estimate rests on noise at all: the noise must be seen in the flat parts of the scan,
 * where the signal is known smooth. An estimate read off edges, lines or fine content is "no evidence", and the
 * scan is left untouched.
 *
 * Reference
 * - A. Foi, M. Trimeche, V. Katkovnik, K. Egiazarian, "Practical Poissonian–Gaussian noise modeling and
 *   fitting for single-image raw-data", IEEE Trans. Image Process. 17(10):1737–1754, 2008.
 *   doi:10.1109/TIP.2008.2001399. Sec. III: the noise is measured only where the image is smooth. The same
 *   segmentation is done here as in the noise-level fit (noise-flat.ts, noise-level.ts), with one σ for all
 *   levels (the white-noise model).
 *
 * Why. The white-noise estimate (noise-estimate.ts) takes the median |HH| over the least-textured half of the
 * 2×2 blocks that touch no clip level. Where nearly every such block is content, that median is content too:
 * a black-and-white silhouette stored at 0 and 255 has only its anti-aliased outline left (scikit-image's
 * horse.png: σ̂ 46.7 from 7 blocks), a 10×10 palette has 25 blocks of colour steps (palette_color.png: σ̂ 45),
 * and both were "denoised". The test: keep the blocks whose 6×6-pixel neighbourhood is a plane up to white noise
 * of the current σ̂ (noise-flat.ts flatnessStatistic below the χ²₈ 90 % quantile; it never looks at the
 * block's own HH, so the selection does not bias the σ̂ read from them), read σ̂ again from their HH, and repeat.
 * Noise holds itself up: on flat regions nine in ten of its blocks pass at its own σ, and the σ̂ they give is
 * that σ again. Content does not: the blocks that pass at an inflated σ̂ give a smaller one, at which fewer pass,
 * down to none. Fewer than MIN_FLAT_BLOCKS blocks after EVIDENCE_STEPS rounds is no evidence.
 *
 * Only for white noise: filtered (correlated) noise has far more power in the neighbourhood's plane fit and in
 * LH, HL than in HH, so it fails this test by design (noise-psd-plan.ts decides that case on its spectrum).
 */
import { exactMedian, groupedMedian, haarBlocks, MAD_TO_SIGMA } from './noise-estimate';
import { flatnessStatistic } from './noise-flat';

/** χ²₈ 90 % quantile (scipy 1.10.1 stats.chi2.ppf(0.9, 8) = 13.3616), as noise-level.ts FLAT_QUANTILE. */
const FLAT_QUANTILE = 13.3616;
/**
 * Rounds of test and re-estimate (chosen here, as noise-level.ts FLAT_STEPS): white noise settles in 2–3 rounds
 * (from the third to the fourth the count moved by 0.04–2.3 % on scikit-image's camera, coins, horse and
 * green_palette with σ 2 and 5 added), content falls to none (horse, coins, microaneurysms, text, chelsea and ihc
 * as stored) or to a few dozen blocks (gravel) in 1–4.
 */
const EVIDENCE_STEPS = 4;
/**
 * Flat blocks needed for evidence (chosen here): a median of n values of |HH| gives σ̂² with a relative standard
 * error of √(5.44/n) (noise-level-ml.ts MAD_SPREAD), about 23 % for 100 blocks, σ̂ to about ±12 %.
 */
export const MIN_FLAT_BLOCKS = 100;

/** What the flat parts of a plane say about white noise: blocks kept in the last round, and their σ̂. */
interface FlatEvidence {
  blocks: number;
  sigma: number;
}

/**
 * The flat blocks of `plane` at its own white-noise level, starting from σ̂ `sigma` (header). Blocks touching
 * `clipLow` or `clipHigh` are left out, as in estimateNoiseSigma. σ̂ 0 (a plane whose flat blocks are all
 * exactly flat) keeps no block: an exactly flat area holds no noise.
 */
export function flatEvidence(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  sigma: number,
  clipLow = Number.NEGATIVE_INFINITY,
  clipHigh = Number.POSITIVE_INFINITY,
): FlatEvidence {
  const blocks = haarBlocks(plane, width, height, clipLow, clipHigh);
  if (!blocks) return { blocks: 0, sigma: 0 };
  const { stat } = flatnessStatistic(blocks);
  const v = new Float64Array(blocks.idx.length);
  let s = sigma;
  let n = 0;
  for (let step = 0; step < EVIDENCE_STEPS && s > 0; step++) {
    const limit = FLAT_QUANTILE * s * s;
    n = 0;
    for (const i of blocks.idx) if (stat[i] < limit) v[n++] = blocks.hh[i];
    if (n === 0) return { blocks: 0, sigma: 0 };
    const kept = v.subarray(0, n);
    s = (blocks.integral ? groupedMedian(kept) : exactMedian(kept)) / 2 / MAD_TO_SIGMA;
  }
  return { blocks: s > 0 ? n : 0, sigma: s };
}
