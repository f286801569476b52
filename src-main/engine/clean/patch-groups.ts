/**
 * Local low-rank denoising: block matching groups similar patches, each group's matrix is truncated at
 * the Gavish–Donoho hard threshold, and the group estimates are aggregated with weights.
 *
 * References
 * - W. Dong, G. Shi, X. Li, "Nonlocal image restoration with bilateral variance estimation: a low-rank
 *   approach", IEEE Trans. Image Process. 22(2):700–711, 2013. doi:10.1109/TIP.2012.2221729.
 *   Groups of similar patches are approximately low rank; estimate each group by singular-value shrinkage.
 * - S. Gu, L. Zhang, W. Zuo, X. Feng, "Weighted nuclear norm minimization with application to image
 *   denoising", CVPR 2014, pp. 2862–2869. doi:10.1109/CVPR.2014.366. Patch sizes and group sizes per
 *   noise level (their §4 settings, recalled from memory: 6×6 patches for σ ≤ 20, 7×7 to σ ≤ 40, 8×8 above),
 *   subtraction of the group mean before the SVD.
 * - K. Dabov, A. Foi, V. Katkovnik, K. Egiazarian, "Image denoising by sparse 3-D transform-domain
 *   collaborative filtering", IEEE Trans. Image Process. 16(8):2080–2095, 2007. doi:10.1109/TIP.2007.901238.
 *   Aggregation weights inversely proportional to the estimate's variance (there: 1/(σ²·N_har), from memory).
 * - M. Gavish, D. L. Donoho, IEEE Trans. Inf. Theory 60(8), 2014: the threshold τ = λ*(β)·√n·σ used per group.
 * - G. H. Golub, W. Kahan, "Calculating the singular values and pseudo-inverse of a matrix", J. SIAM
 *   Numer. Anal. 2(2):205–224, 1965: Lanczos bidiagonalisation, used here with full re-orthogonalisation
 *   to get the leading singular triplets of each group cheaply (only those above τ are kept); the group
 *   estimate is group-low-rank.ts, the bidiagonalisation linalg/lanczos.ts.
 *
 * Split independence: every reference patch sits on one global grid and its group depends only on the
 * input. A band [rowStart, rowEnd) processes, in global raster order, every group that can touch it, and
 * accumulates only into its own rows. Each output pixel therefore sees the same additions in the same
 * order however the image is split into bands, so 1, 2 or N workers give bit-identical output.
 */

import { BandAggregate, forEachGroup, matchGroup, searchOffsets } from './block-matching';
import { medianOf, sigmaFromMedian } from './gavish-donoho';
import { GroupLowRank, type GroupParams } from './group-low-rank';
import { wienerGroupsBand, wienerMargin } from './wiener-groups';

export type { GroupParams };

/**
 * Automatic sizes from the noise level on the 8-bit scale. Patch sides follow Gu et al. 2014 (from memory);
 * group size and stride were chosen here for speed at equal quality (first clean commit 87d461e). The
 * search radius (24, both passes) and the second pass (Wiener, 32 patches, Dabov et al. 2007's two-step
 * idea, wiener-groups.ts) were set on the images bench/clean.bench.ts runs (test/fixtures/images camera,
 * moon, page, text and samples/gel-scan.tif, Gaussian noise σ = 5, 10, 20): radius 8 → 24 alone took moon
 * σ = 5 from +7.5 to +8.2 dB (overlapping near neighbours share noise, so a small window averages less).
 * test/clean/denoise.test.ts holds them to margins measured on other images (phantom.png,
 * chessboard_GRAY_U16.tif).
 */
export function autoGroupParams(sigma8: number): GroupParams {
  const patch = sigma8 <= 20 ? 6 : sigma8 <= 40 ? 7 : 8;
  return {
    patch,
    groupSize: patch === 6 ? 24 : patch === 7 ? 32 : 40,
    stride: patch,
    searchRadius: SEARCH_RADIUS,
    lanczosSteps: 12,
    wiener: { groupSize: 32, stride: patch, searchRadius: SEARCH_RADIUS },
  };
}

/** Half-width of the block-matching window of both passes (see autoGroupParams). */
const SEARCH_RADIUS = 24;

export interface GroupStats {
  groups: number;
  /** Sum, min and max of the kept rank over groups and planes. */
  rankSum: number;
  rankMin: number;
  rankMax: number;
  /** Groups that needed the exact eigen-decomposition. */
  exact: number;
}

export interface BandResult {
  /** One Float32Array per plane with rows [rowStart, rowEnd). */
  planes: Float32Array[];
  stats: GroupStats;
}

/**
 * Denoise rows [rowStart, rowEnd) of the planes. `guide` is the plane used for block matching
 * (luma for colour). `sigmas[c]` is the noise standard deviation of plane c in its own units.
 */
export function denoiseGroupsBand(
  planes: Float32Array[],
  width: number,
  height: number,
  sigmas: number[],
  params: GroupParams,
  rowStart: number,
  rowEnd: number,
  guide: Float32Array = planes[0],
  onProgress?: (fraction: number) => void,
): BandResult {
  const p = Math.min(params.patch, width, height);
  const K = params.groupSize;
  const m = p * p;
  const agg = new BandAggregate(planes.length, width, rowStart, rowEnd);
  const stats: GroupStats = {
    groups: 0,
    rankSum: 0,
    rankMin: Number.POSITIVE_INFINITY,
    rankMax: 0,
    exact: 0,
  };
  const lr = new GroupLowRank(m, K, params.lanczosSteps);
  const est = new Float64Array(m * K);
  const visit = (count: number, posY: Int32Array, posX: Int32Array) => {
    stats.groups++;
    for (let c = 0; c < planes.length; c++) {
      const img = planes[c];
      const Y = lr.Y;
      for (let k = 0; k < count; k++) {
        const base = posY[k] * width + posX[k];
        for (let i = 0; i < p; i++)
          for (let j = 0; j < p; j++) Y[(i * p + j) * count + k] = img[base + i * width + j];
      }
      const r = lr.estimate(count, sigmas[c], params, est);
      stats.rankSum += r;
      if (r < stats.rankMin) stats.rankMin = r;
      if (r > stats.rankMax) stats.rankMax = r;
      if (lr.lastExact) stats.exact++;
      // Weight ∝ 1 / (variance of the estimate): degrees of freedom of mean + rank-r part over m·n entries.
      agg.add(c, est, count, posY, posX, p, (m * count) / (m + r * (m + count - r)));
    }
  };
  forEachGroup(guide, width, height, { ...params, patch: p }, rowStart, rowEnd, visit, onProgress);
  const out = agg.result(planes);
  if (stats.groups === 0) stats.rankMin = 0;
  return { planes: out, stats };
}

/**
 * Gavish–Donoho noise estimate σ̂ = y_med/√(n·μ_β) of each of `samples` patch groups on a sparse grid
 * (all singular values of the centred group, exact), and their median. A cross-check of the wavelet
 * estimate: groups of similar patches are nearly low rank, so their median singular value is mostly noise.
 * Overlapping patches in a group share noise, so this tends to read somewhat low.
 */
export function groupMedianRuleSigma(
  plane: Float32Array,
  width: number,
  height: number,
  params: GroupParams,
  samples = 256,
  guide: Float32Array = plane,
): number | null {
  const p = Math.min(params.patch, width, height);
  const K = params.groupSize;
  const m = p * p;
  const side = Math.max(1, Math.round(Math.sqrt(samples)));
  const offsets = searchOffsets(params.searchRadius);
  const heapD = new Float64Array(K);
  const heapI = new Int32Array(K);
  const posY = new Int32Array(K);
  const posX = new Int32Array(K);
  const lr = new GroupLowRank(m, K, params.lanczosSteps);
  const values: number[] = [];
  for (let a = 0; a < side; a++)
    for (let b = 0; b < side; b++) {
      const y = Math.floor(((a + 0.5) * (height - p + 1)) / side);
      const x = Math.floor(((b + 0.5) * (width - p + 1)) / side);
      const count = matchGroup(guide, width, height, p, K, offsets, y, x, heapD, heapI, posY, posX);
      if (count < 3) continue;
      for (let k = 0; k < count; k++) {
        const base = posY[k] * width + posX[k];
        for (let i = 0; i < p; i++)
          for (let j = 0; j < p; j++) lr.Y[(i * p + j) * count + k] = plane[base + i * width + j];
      }
      const sv = lr.centredSingularValues(count);
      const nEff = count - 1;
      const med = medianOf(sv.subarray(0, Math.min(m, nEff)));
      values.push(sigmaFromMedian(m, nEff, med));
    }
  return values.length ? medianOf(values) : null;
}

/** One band of a denoise: the planes (gray, or Y Cb Cr; plane 0 guides the matching) and the rows to make. */
export interface BandJob {
  planes: Float32Array[];
  width: number;
  height: number;
  sigmas: number[];
  params: GroupParams;
  rowStart: number;
  rowEnd: number;
}

/**
 * Rows [rowStart, rowEnd) of the full denoise: the low-rank pass alone, or (params.wiener) the low-rank pass
 * on the band widened by the Wiener pass's margin, then the Wiener pass on the band. Both passes give
 * band-independent rows, so the result does not depend on how many bands share the image.
 */
export function denoiseBand(job: BandJob, onProgress?: (fraction: number) => void): BandResult {
  const { planes, width, height, sigmas, params, rowStart, rowEnd } = job;
  const second = params.wiener;
  if (!second)
    return denoiseGroupsBand(planes, width, height, sigmas, params, rowStart, rowEnd, planes[0], onProgress);
  const params2: GroupParams = { ...params, ...second };
  const margin = wienerMargin(params2);
  const e0 = Math.max(0, rowStart - margin);
  const e1 = Math.min(height, rowEnd + margin);
  const first = denoiseGroupsBand(planes, width, height, sigmas, params, e0, e1, planes[0], (f) =>
    onProgress?.(f / 2),
  );
  const basic = first.planes.map((b) => {
    const full = new Float32Array(width * height);
    full.set(b, e0 * width);
    return full;
  });
  const res = wienerGroupsBand({ ...job, params: params2 }, basic, (f) => onProgress?.(0.5 + f / 2));
  return { planes: res.planes, stats: first.stats };
}
