/**
 * The low-rank base's estimated weighted squared error at a byte count, for ./residual-first's decision on a
 * centred crop: is a base worth factoring at all?
 *
 * The estimate is ./solve estimateErrorAtBytes's: the same step grid and hill climb, and at each step every
 * component quantised without refit (../codec/quantise quantiseVector and componentError, the same
 * operations), its bits from the cost model (./cost-model) at ratio 1, and the greedy order of ./allocate.
 * Two things differ, for speed (issue 12: the decision runs on a second thread while the whole plane is
 * transformed, and should finish first):
 * - each tile's SVD comes from its Gram matrix (../linalg/gram-svd), not one-sided Jacobi, with U and V
 *   columns contiguous: σ and the vectors of every component the search can keep (σ ≥ 0.7 of the finest
 *   step, far above ε·σ₁) agree with Jacobi's to rounding, and the estimate with estimateErrorAtBytes's to
 *   within 1.3e-11 relative (mostly 1e-14–1e-13) on 13 images (6 of samples/, the 6 test fixtures and a
 *   3300×2500 grey speed scan) at 0.1, 0.25, 0.5 and 1 bpp and PSNR floors 33 and 38.5: none of the 78
 *   decisions changed; test/lowrank/base-estimate.test.ts checks ≤ 1e-9;
 * - every quantised vector of a step goes into one reused buffer instead of an object per component.
 */
import { DEAD_ZONE } from '../codec/quantise';
import { tileGrid } from '../codec/quantised';
import { gramSvdColumns } from '../linalg/gram-svd';
import { type GainCost, greedyOrder } from './allocate';
import { prefixForBytes, prefixTotals } from './candidate';
import { codeLengths, countVector, newCounts, vectorBits } from './cost-model';
import { meanRemovedTile } from './factorise';
import { hillClimb, stepGrid } from './solve';

/** One tile's SVD less its quantised mean: σ, and U (h-long) and V (w-long) columns stored one after another. */
export interface TileColumns {
  h: number;
  w: number;
  /** ‖tile − mean‖²_F. */
  energy: number;
  s: Float64Array;
  u: Float64Array;
  v: Float64Array;
}

export interface ColumnsPlane {
  tiles: TileColumns[];
  /** Share of this plane's squared error in the reported one. */
  weight: number;
  /** This plane's step is Δ·stepScale. */
  stepScale: number;
}

/** f64 values {@link tileColumns} stores for a plane's tiles of side `tile`: σ, U and V of every tile. */
function columnsLength(width: number, height: number, tile: number): number {
  let n = 0;
  for (const { h, w } of tileGrid(width, height, tile)) n += Math.min(h, w) * (h + w + 1);
  return n;
}

/**
 * ./factorise factorPlane's tiles of side `tile` with mean removal at `meanStep`, as contiguous columns.
 * With `store` (at least columnsLength values), every tile's σ, U and V are views of it, one after another.
 */
export function tileColumns(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  tile: number,
  meanStep: number,
  store?: Float64Array,
): TileColumns[] {
  let at = 0;
  const grid = tileGrid(width, height, tile);
  const cut = store && new Float64Array(grid.reduce((m, r) => Math.max(m, r.w * r.h), 0));
  return grid.map((rect) => {
    const { h, w } = rect;
    const { a, energy } = meanRemovedTile(plane, width, rect, { meanRemoval: true, meanStep }, false, cut);
    if (energy === 0)
      return { h, w, energy, s: new Float64Array(0), u: new Float64Array(0), v: new Float64Array(0) };
    const k = Math.min(h, w);
    const into = store && {
      s: store.subarray(at, at + k),
      u: store.subarray(at + k, at + k + k * h),
      v: store.subarray(at + k + k * h, at + k * (h + w + 1)),
    };
    at += k * (h + w + 1);
    return { h, w, energy, ...gramSvdColumns({ rows: h, cols: w, data: a }, into) };
  });
}

/** The side thread's crop job (./side-jobs): the planes' crops, their weights and step scales, the tile sides. */
export interface CropBaseArgs {
  crop: ArrayLike<number>[];
  width: number;
  height: number;
  weights: number[];
  scales: number[];
  bytes: number;
  maxValue: number;
  tiles: number[];
}

/**
 * Lowest estimated base error at `bytes` over the tile sides, each tiling factored on the crop. One column
 * store and one quantised-entry buffer, sized once for the largest tiling, serve every tiling and step
 * (issue 12: fresh pages cost ≈ 11 µs each on the bench VM; per-tile arrays touched ≈ 6.5 k of them).
 */
export function cropBaseError(a: CropBaseArgs): number {
  const per = a.tiles.map((t) => columnsLength(a.width, a.height, t));
  const store = new Float64Array(a.crop.length * Math.max(0, ...per));
  const scratch = { q: new Int32Array(store.length) };
  let best = Number.POSITIVE_INFINITY;
  a.tiles.forEach((tile, i) => {
    const planes: ColumnsPlane[] = a.crop.map((p, k) => ({
      tiles: tileColumns(p, a.width, a.height, tile, a.maxValue / 1020, store.subarray(k * per[i])),
      weight: a.weights[k],
      stepScale: a.scales[k],
    }));
    best = Math.min(best, climb(planes, a.bytes, a.maxValue, scratch));
  });
  return best;
}

/**
 * Estimated weighted squared error of the best base-only plan whose factor streams take `payload` bytes
 * (./solve estimateErrorAtBytes on the same tiles, the same value).
 */
export function baseErrorAtBytes(planes: ColumnsPlane[], payload: number, maxValue: number): number {
  return climb(planes, payload, maxValue, { q: new Int32Array(1 << 16) });
}

function climb(
  planes: ColumnsPlane[],
  payload: number,
  maxValue: number,
  scratch: { q: Int32Array },
): number {
  const grid = stepGrid(maxValue);
  return hillClimb(grid.length, (k) => errorAtStep(planes, grid[k], payload, scratch))[0].err;
}

/** Quantise x[from … from + len) at scale/step into q[at …] (quantiseVector's arithmetic); returns Σ q². */
function quantiseInto(
  x: Float64Array,
  from: number,
  len: number,
  inv: number,
  q: Int32Array,
  at: number,
): number {
  let n2 = 0;
  for (let j = 0; j < len; j++) {
    const y = x[from + j] * inv;
    const a = Math.abs(y);
    const r = a < 0.5 + DEAD_ZONE ? 0 : Math.floor(a + 0.5 - DEAD_ZONE);
    q[at + j] = y < 0 ? -r : r;
    n2 += r * r;
  }
  return n2;
}

/** Σ q[at + j]·x[from + j] in order of j. */
function dotQ(q: Int32Array, at: number, x: Float64Array, from: number, len: number): number {
  let d = 0;
  for (let j = 0; j < len; j++) d += q[at + j] * x[from + j];
  return d;
}

/**
 * componentError of ../codec/quantise for the vectors q[at …] (h entries) and q[at + h …] (w entries)
 * against σ·u·vᵀ, the same operations in the same order.
 */
function quantisedError(
  q: Int32Array,
  at: number,
  t: TileColumns,
  i: number,
  nu2: number,
  nv2: number,
  sigma: number,
  step: number,
): number {
  const nu = Math.sqrt(nu2);
  const nv = Math.sqrt(nv2);
  const c = nu > 0 && nv > 0 ? step / Math.sqrt(nu * nv) : 0;
  if (c === 0) return sigma * sigma;
  const du = dotQ(q, at, t.u, i * t.h, t.h);
  const dv = dotQ(q, at + t.h, t.v, i * t.w, t.w);
  const e = c * c * nu2 * nv2 + sigma * sigma - 2 * sigma * c * du * dv;
  return e > 0 ? e : 0;
}

/** The estimated error at step Δ = `delta` of the greedy prefix whose estimated bits fit `payload` bytes. */
function errorAtStep(
  planes: ColumnsPlane[],
  delta: number,
  payload: number,
  scratch: { q: Int32Array },
): number {
  const counts = newCounts();
  const seqs: Array<GainCost & { at: Int32Array; h: number; w: number }> = [];
  let baseD = 0;
  let used = 0;
  for (const { tiles, weight, stepScale } of planes) {
    const step = delta * stepScale;
    for (const t of tiles) {
      baseD += weight * t.energy;
      let r = 0;
      while (r < t.s.length && !(t.s[r] < (0.5 + DEAD_ZONE) * step)) r++;
      const gains = new Float64Array(r);
      const at = new Int32Array(r);
      for (let i = 0; i < r; i++) {
        const sigma = t.s[i];
        if (scratch.q.length < used + t.h + t.w) {
          const grown = new Int32Array(2 * (used + t.h + t.w));
          grown.set(scratch.q.subarray(0, used));
          scratch.q = grown;
        }
        const q = scratch.q;
        const inv = sigma / step;
        const nu2 = quantiseInto(t.u, i * t.h, t.h, inv, q, used);
        const nv2 = quantiseInto(t.v, i * t.w, t.w, inv, q, used + t.h);
        const gain = sigma * sigma - quantisedError(q, used, t, i, nu2, nv2, sigma, step);
        const err = sigma * sigma - gain;
        gains[i] = weight * (sigma * sigma - err);
        countVector(counts, q, used, t.h);
        countVector(counts, q, used + t.h, t.w);
        at[i] = used;
        used += t.h + t.w;
      }
      seqs.push({ gains, costs: new Float64Array(r), at, h: t.h, w: t.w });
    }
  }
  const table = codeLengths(counts);
  for (const s of seqs)
    for (let i = 0; i < s.at.length; i++)
      (s.costs as Float64Array)[i] =
        vectorBits(scratch.q, table, s.at[i], s.h) + vectorBits(scratch.q, table, s.at[i] + s.h, s.w) + 2;
  const { cumCost, cumGain } = prefixTotals(greedyOrder(seqs));
  return Math.max(0, baseD - cumGain[prefixForBytes(cumCost, payload, 1)]);
}
