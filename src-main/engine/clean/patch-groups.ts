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

import { medianOf, sigmaFromMedian } from './gavish-donoho';
import { GroupLowRank, type GroupParams } from './group-low-rank';

export type { GroupParams };

/**
 * Automatic sizes from the noise level on the 8-bit scale. Patch sides follow Gu et al. 2014 (from memory);
 * group size, stride and search radius were chosen here for speed at equal quality. Fitted on: the images
 * bench/clean.bench.ts runs (test/fixtures/images camera, moon, page, text and samples/*, Gaussian noise
 * σ = 5, 10, 20; first clean commit 87d461e). test/clean/denoise.test.ts holds them to margins measured on
 * other images (phantom.png, chessboard_GRAY_U16.tif).
 */
export function autoGroupParams(sigma8: number): GroupParams {
  const patch = sigma8 <= 20 ? 6 : sigma8 <= 40 ? 7 : 8;
  return {
    patch,
    groupSize: patch === 6 ? 24 : patch === 7 ? 32 : 40,
    stride: patch,
    searchRadius: 8,
    lanczosSteps: 12,
  };
}

/** Reference positions along one axis: 0, stride, 2·stride, … and always the last valid one. */
function referenceGrid(length: number, patch: number, stride: number): Int32Array {
  const last = length - patch;
  if (last < 0) return new Int32Array(0);
  const out: number[] = [];
  for (let v = 0; v < last; v += stride) out.push(v);
  out.push(last);
  return Int32Array.from(out);
}

/** Candidate offsets, nearest first (ties in a fixed order): every offset within ±3, every even one beyond. */
function searchOffsets(radius: number): Int32Array {
  const list: Array<[number, number]> = [];
  for (let dy = -radius; dy <= radius; dy++)
    for (let dx = -radius; dx <= radius; dx++) {
      const near = Math.abs(dy) <= 3 && Math.abs(dx) <= 3;
      if (near || (dy % 2 === 0 && dx % 2 === 0)) list.push([dy, dx]);
    }
  list.sort((a, b) => a[0] * a[0] + a[1] * a[1] - (b[0] * b[0] + b[1] * b[1]) || a[0] - b[0] || a[1] - b[1]);
  const out = new Int32Array(list.length * 2);
  list.forEach(([dy, dx], i) => {
    out[2 * i] = dy;
    out[2 * i + 1] = dx;
  });
  return out;
}

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

/** Weighting floor so that pixels no group touches keep their input value (cannot happen with a full grid). */
const MIN_WEIGHT = 1e-12;

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
  const R = params.searchRadius;
  const m = p * p;
  const P = planes.length;
  const bandRows = rowEnd - rowStart;
  const num = planes.map(() => new Float64Array(bandRows * width));
  const den = planes.map(() => new Float64Array(bandRows * width));
  const stats: GroupStats = {
    groups: 0,
    rankSum: 0,
    rankMin: Number.POSITIVE_INFINITY,
    rankMax: 0,
    exact: 0,
  };
  const gy = referenceGrid(height, p, params.stride);
  const gx = referenceGrid(width, p, params.stride);
  const offsets = searchOffsets(R);
  const heapD = new Float64Array(K);
  const heapI = new Int32Array(K);
  const posY = new Int32Array(K);
  const posX = new Int32Array(K);
  const lr = new GroupLowRank(m, K, params.lanczosSteps);
  const est = new Float64Array(m * K);
  // Refs whose group (patches within ±R rows of the ref) can reach the band.
  let first = 0;
  while (first < gy.length && gy[first] + R + p - 1 < rowStart) first++;
  let last = gy.length - 1;
  while (last >= 0 && gy[last] - R > rowEnd - 1) last--;
  for (let a = first; a <= last; a++) {
    const y = gy[a];
    for (let b = 0; b < gx.length; b++) {
      const x = gx[b];
      const count = matchGroup(guide, width, height, p, K, offsets, y, x, heapD, heapI, posY, posX);
      // Skip groups with no patch in the band.
      let touches = false;
      for (let k = 0; k < count && !touches; k++)
        if (posY[k] + p - 1 >= rowStart && posY[k] < rowEnd) touches = true;
      if (!touches) continue;
      stats.groups++;
      for (let c = 0; c < P; c++) {
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
        const dof = m + r * (m + count - r);
        const w = (m * count) / dof;
        const nm = num[c];
        const dn = den[c];
        for (let k = 0; k < count; k++) {
          const py = posY[k];
          for (let i = 0; i < p; i++) {
            const row = py + i;
            if (row < rowStart || row >= rowEnd) continue;
            const ob = (row - rowStart) * width + posX[k];
            for (let j = 0; j < p; j++) {
              nm[ob + j] += w * est[(i * p + j) * count + k];
              dn[ob + j] += w;
            }
          }
        }
      }
    }
    if (onProgress) onProgress((a - first + 1) / (last - first + 1));
  }
  const out = planes.map((src, c) => {
    const o = new Float32Array(bandRows * width);
    const nm = num[c];
    const dn = den[c];
    for (let i = 0; i < o.length; i++) o[i] = dn[i] > MIN_WEIGHT ? nm[i] / dn[i] : src[rowStart * width + i];
    return o;
  });
  if (stats.groups === 0) stats.rankMin = 0;
  return { planes: out, stats };
}

/**
 * Block matching: the K candidates nearest to the reference patch at (y, x) by (SSD on `guide`, candidate
 * order), with exact early termination of each SSD once it cannot enter the current K best. Writes their
 * positions to posY/posX and returns how many were found (fewer than K only in tiny images).
 */
function matchGroup(
  guide: Float32Array,
  width: number,
  height: number,
  p: number,
  K: number,
  offsets: Int32Array,
  y: number,
  x: number,
  heapD: Float64Array,
  heapI: Int32Array,
  posY: Int32Array,
  posX: Int32Array,
): number {
  const nOff = offsets.length / 2;
  let count = 0;
  const refBase = y * width + x;
  for (let o = 0; o < nOff; o++) {
    const cy = y + offsets[2 * o];
    const cx = x + offsets[2 * o + 1];
    if (cy < 0 || cx < 0 || cy > height - p || cx > width - p) continue;
    const bound = count === K ? heapD[0] : Number.POSITIVE_INFINITY;
    const candBase = cy * width + cx;
    let s = 0;
    for (let i = 0; i < p && s < bound; i++) {
      const ra = refBase + i * width;
      const ca = candBase + i * width;
      for (let j = 0; j < p; j++) {
        const t = guide[ra + j] - guide[ca + j];
        s += t * t;
      }
    }
    if (s >= bound) continue;
    if (count < K) {
      heapPush(heapD, heapI, count, s, o);
      count++;
    } else heapReplaceTop(heapD, heapI, K, s, o);
  }
  for (let k = 0; k < count; k++) {
    const o = heapI[k];
    posY[k] = y + offsets[2 * o];
    posX[k] = x + offsets[2 * o + 1];
  }
  return count;
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

/** Max-heap on (distance, order) of the current best candidates. */
function heapLess(d: Float64Array, idx: Int32Array, a: number, b: number): boolean {
  return d[a] < d[b] || (d[a] === d[b] && idx[a] < idx[b]);
}
function heapPush(d: Float64Array, idx: Int32Array, n: number, v: number, o: number) {
  let i = n;
  d[i] = v;
  idx[i] = o;
  while (i > 0) {
    const parent = (i - 1) >> 1;
    if (!heapLess(d, idx, parent, i)) break;
    swap(d, idx, i, parent);
    i = parent;
  }
}
function heapReplaceTop(d: Float64Array, idx: Int32Array, n: number, v: number, o: number) {
  d[0] = v;
  idx[0] = o;
  let i = 0;
  for (;;) {
    const l = 2 * i + 1;
    const r = l + 1;
    let big = i;
    if (l < n && heapLess(d, idx, big, l)) big = l;
    if (r < n && heapLess(d, idx, big, r)) big = r;
    if (big === i) break;
    swap(d, idx, i, big);
    i = big;
  }
}
function swap(d: Float64Array, idx: Int32Array, a: number, b: number) {
  const t = d[a];
  d[a] = d[b];
  d[b] = t;
  const u = idx[a];
  idx[a] = idx[b];
  idx[b] = u;
}
