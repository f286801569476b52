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
 * - every quantised vector of a step goes into one reused buffer instead of an object per component, and a
 *   step's gains, costs and hull blocks into typed arrays sized once per crop (no GainCost or Block objects;
 *   the same hull, the same total order and the same sums in the same order, so the same value bit for bit:
 *   checked against the object version on the 14 images of samples/, test/fixtures/images and the speed
 *   scan at 0.05–2 bpp, 84 values equal). That took the side thread's CPU for the speed scan's crop from
 *   ≈ 150 to ≈ 135 ms warm (the first, cold call ≈ 200 ms of its thread either way, load 9).
 */
import { DEAD_ZONE } from '../codec/quantise';
import { tileGrid } from '../codec/quantised';
import { gramSvdColumns } from '../linalg/gram-svd';
import { greedyBlockOrder, poolHull } from './allocate';
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
 * store and one set of step arrays, sized once for the largest tiling, serve every tiling and step
 * (issue 12: fresh pages cost ≈ 11 µs each on the bench VM; per-tile arrays touched ≈ 6.5 k of them).
 */
export function cropBaseError(a: CropBaseArgs): number {
  const per = a.tiles.map((t) => columnsLength(a.width, a.height, t));
  const store = new Float64Array(a.crop.length * Math.max(0, ...per));
  const scratch = new StepScratch(store.length);
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
  return climb(planes, payload, maxValue, new StepScratch(1 << 16));
}

function climb(planes: ColumnsPlane[], payload: number, maxValue: number, scratch: StepScratch): number {
  const grid = stepGrid(maxValue);
  // Σ weight·‖tile − mean‖², in the order errorAtStep summed it at every step.
  let baseD = 0;
  let count = 0;
  for (const { tiles, weight } of planes)
    for (const t of tiles) {
      baseD += weight * t.energy;
      count += t.s.length;
    }
  scratch.fit(count);
  return hillClimb(grid.length, (k) => errorAtStep(planes, grid[k], payload, baseD, scratch))[0].err;
}

/**
 * Arrays one step's estimate works in, grown when a tiling needs more: quantised entries (q), and per
 * component its gain, its cost and where its entries start; per hull block its gain, cost, tile and end rank.
 */
class StepScratch {
  q: Int32Array;
  gains = new Float64Array(0);
  costs = new Float64Array(0);
  at = new Int32Array(0);
  bGain = new Float64Array(0);
  bCost = new Float64Array(0);
  bTile = new Int32Array(0);
  bEnd = new Int32Array(0);
  ratio = new Float64Array(0);
  idx = new Uint32Array(0);
  /** poolHull's scratch (one tile's blocks). */
  sg: number[] = [];
  sc: number[] = [];
  se: number[] = [];
  /** The quantised pair's Σ qᵤ·u and Σ q_v·v, set by {@link quantiseInto}. */
  dot = 0;

  constructor(entries: number) {
    this.q = new Int32Array(entries);
  }

  /** Room for `n` components' gains, costs and blocks. */
  fit(n: number): void {
    if (this.gains.length >= n) return;
    this.gains = new Float64Array(n);
    this.costs = new Float64Array(n);
    this.at = new Int32Array(n);
    this.bGain = new Float64Array(n);
    this.bCost = new Float64Array(n);
    this.bTile = new Int32Array(n);
    this.bEnd = new Int32Array(n);
    this.ratio = new Float64Array(n);
    this.idx = new Uint32Array(n);
  }

  /** Room for `n` quantised entries, keeping the first `used`. */
  room(used: number, n: number): Int32Array {
    if (this.q.length < n) {
      const grown = new Int32Array(2 * n);
      grown.set(this.q.subarray(0, used));
      this.q = grown;
    }
    return this.q;
  }
}

/**
 * Quantise x[from … from + len) at scale/step into q[at …] (quantiseVector's arithmetic); returns Σ q² and
 * sets s.dot to Σ q[at + j]·x[from + j] in order of j (what componentError's dot product gives).
 */
function quantiseInto(
  x: Float64Array,
  from: number,
  len: number,
  inv: number,
  q: Int32Array,
  at: number,
  s: StepScratch,
): number {
  let n2 = 0;
  let d = 0;
  for (let j = 0; j < len; j++) {
    const xj = x[from + j];
    const y = xj * inv;
    const a = Math.abs(y);
    const r = a < 0.5 + DEAD_ZONE ? 0 : Math.floor(a + 0.5 - DEAD_ZONE);
    const v = y < 0 ? -r : r;
    q[at + j] = v;
    n2 += r * r;
    d += v * xj;
  }
  s.dot = d;
  return n2;
}

/**
 * componentError of ../codec/quantise for the quantised pair (Σ q², and Σ q·x from {@link quantiseInto})
 * against σ·u·vᵀ, the same operations in the same order.
 */
function quantisedError(
  nu2: number,
  nv2: number,
  du: number,
  dv: number,
  sigma: number,
  step: number,
): number {
  const nu = Math.sqrt(nu2);
  const nv = Math.sqrt(nv2);
  const c = nu > 0 && nv > 0 ? step / Math.sqrt(nu * nv) : 0;
  if (c === 0) return sigma * sigma;
  const e = c * c * nu2 * nv2 + sigma * sigma - 2 * sigma * c * du * dv;
  return e > 0 ? e : 0;
}

/**
 * The estimated error at step Δ = `delta` of the greedy prefix whose estimated bits fit `payload` bytes:
 * ./allocate greedyOrder's blocks (poolHull per tile, then ratio, tile and end rank: a total order) and
 * ./candidate prefixTotals and prefixForBytes, in typed arrays (as ./packed-order does).
 */
function errorAtStep(
  planes: ColumnsPlane[],
  delta: number,
  payload: number,
  baseD: number,
  s: StepScratch,
): number {
  const counts = newCounts();
  const { gains, costs, at } = s;
  let used = 0;
  let c = 0;
  for (const { tiles, weight, stepScale } of planes) {
    const step = delta * stepScale;
    for (const t of tiles) {
      let r = 0;
      while (r < t.s.length && !(t.s[r] < (0.5 + DEAD_ZONE) * step)) r++;
      for (let i = 0; i < r; i++, c++) {
        const sigma = t.s[i];
        const q = s.room(used, used + t.h + t.w);
        const inv = sigma / step;
        const nu2 = quantiseInto(t.u, i * t.h, t.h, inv, q, used, s);
        const du = s.dot;
        const nv2 = quantiseInto(t.v, i * t.w, t.w, inv, q, used + t.h, s);
        const gain = sigma * sigma - quantisedError(nu2, nv2, du, s.dot, sigma, step);
        const err = sigma * sigma - gain;
        gains[c] = weight * (sigma * sigma - err);
        countVector(counts, q, used, t.h);
        countVector(counts, q, used + t.h, t.w);
        at[c] = used;
        used += t.h + t.w;
      }
    }
  }
  const table = codeLengths(counts);
  const { bGain, bCost, bTile, bEnd, ratio, idx, sg, sc, se } = s;
  let nb = 0;
  let tile = 0;
  c = 0;
  for (const { tiles, stepScale } of planes) {
    const step = delta * stepScale;
    for (const t of tiles) {
      let r = 0;
      while (r < t.s.length && !(t.s[r] < (0.5 + DEAD_ZONE) * step)) r++;
      for (let i = 0; i < r; i++)
        costs[c + i] =
          vectorBits(s.q, table, at[c + i], t.h) + vectorBits(s.q, table, at[c + i] + t.h, t.w) + 2;
      const m = poolHull(gains, costs, r, sg, sc, se, c);
      for (let j = 0; j < m; j++, nb++) {
        bGain[nb] = sg[j];
        bCost[nb] = sc[j];
        bTile[nb] = tile;
        bEnd[nb] = se[j];
      }
      c += r;
      tile++;
    }
  }
  const order = greedyBlockOrder(bGain, bCost, bTile, bEnd, nb, ratio, idx);
  // ./candidate prefixForBytes at ratio 1: the longest prefix whose cumulative cost is ≤ the payload's bits.
  const bits = (payload * 8) / 1;
  let cost = 0;
  let gain = 0;
  for (let i = 0; i < nb; i++) {
    const b = order[i];
    if (!(cost + bCost[b] <= bits)) break;
    cost += bCost[b];
    gain += bGain[b];
  }
  return Math.max(0, baseD - gain);
}
