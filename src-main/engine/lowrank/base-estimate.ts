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
 * A step's work is ./step-error's (small functions V8 optimises once; vectors that quantise to all zeros
 * counted and costed at once, from their largest entry): on the speed scan's crop, one cold call in a fresh
 * process took 375 → 258 ms of process CPU, compiles included (medians of 10 interleaved runs, load ~10).
 */
import { tileGrid } from '../codec/quantised';
import { gramSvdColumns } from '../linalg/gram-svd';
import { meanRemovedTile } from './factorise';
import { hillClimb, stepGrid } from './solve';
import { type ColumnsPlane, errorAtStep, readySteps, StepScratch, type TileColumns } from './step-error';

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
  const scratch = new StepScratch();
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
  return climb(planes, payload, maxValue, new StepScratch());
}

function climb(planes: ColumnsPlane[], payload: number, maxValue: number, scratch: StepScratch): number {
  const grid = stepGrid(maxValue);
  const baseD = readySteps(planes, scratch);
  return hillClimb(grid.length, (k) => errorAtStep(planes, grid[k], payload, baseD, scratch))[0].err;
}
