/**
 * Factor a plane, whole or tile by tile, into σ, U, V. Tiles use the exact one-sided Jacobi SVD; a whole
 * plane uses the engine's randomized SVD when it is available and the plane is large, else Jacobi.
 */

import { type TileRect, tileGrid } from '../codec/quantised';
import { type Backend, fullSvd, jacobiSvd, type Matrix, randomizedSvd, type SvdResult } from '../linalg';
import type { RandomizedSvdOptions } from '../linalg/randomized-svd';

export interface TileFactors {
  rect: TileRect;
  /** Quantised tile mean (in mean steps) that was subtracted before the SVD. */
  meanQ: number;
  /** ‖tile − mean‖²_F: the energy a rank-0 tile leaves as error. */
  energy: number;
  /** The tile minus its mean, h×w row-major (the quantiser refits against it). */
  data: Float32Array;
  s: Float64Array;
  /** h×r, columns are left singular vectors. */
  U: Matrix;
  /** w×r. */
  V: Matrix;
}

export interface PlaneFactors {
  width: number;
  height: number;
  tile: number;
  meanStep: number;
  tiles: TileFactors[];
}

export interface FactorOptions {
  /** 0 = whole plane, else square tile side. */
  tile: number;
  /** Subtract each tile's mean first (per-tile mean removal). */
  meanRemoval: boolean;
  /** Step of stored means (grey levels). */
  meanStep: number;
  /** Largest rank needed for a whole plane (randomized SVD only). */
  maxRank?: number;
  /** Seed for the randomized SVD. */
  seed?: number;
  /** Where a whole plane's randomized SVD runs; default the one set by `setPlaneBackend`, else the engine's. */
  backend?: Backend;
}

/**
 * Whole-plane randomized SVD settings (the CLI/app fast path): f32 storage and SIMD products, q = 2 power
 * steps with every step re-orthonormalised (HMT 2011 Alg. 4.4; in f32 this keeps the error at the f64
 * level, see ../shared/design/PERFORMANCE-NOTES.md), and an a-posteriori check that adds power steps
 * (up to 8) while the estimated Frobenius error exceeds 1.01× the Eckart–Young optimum.
 */
const PLANE_POWER_ITERS = 2;
export const PLANE_ACCURACY = 1.01;
const PLANE_MAX_POWER_ITERS = 8;
/**
 * Oversampling p of the whole-plane path: at least 20, with l = k + p rounded up to a multiple of 8 (the
 * f32 kernel's register block is 4×8, so a 61-column block pays a scalar tail column). Measured on the
 * 1500×2000 bench plane (camera.png resized, k = 51, q = 2, f32, reuse finish, 5 products with A; optimum
 * from numpy 1.24.2 linalg.svd): p = 29 (l = 80) gives 1.0012× the Eckart–Young optimum with σ₅₁ 0.2 % low,
 * p = 21 (l = 72) 1.0036× with σ₅₁ 1.7 % low — within the 1.01× target with a tenth fewer product columns
 * (5·72 = 360 against 400; user CPU of the whole factorisation 81–84 → 68–72 ms with the ziggurat test
 * matrix, load average 13–15). The accuracy check still adds power steps where a flatter spectrum needs
 * them. The report's Eckart–Young figures (σ_{k+1}, the Frobenius optimum) come from these σ̂.
 */
const PLANE_MIN_OVERSAMPLE = 20;

/** Oversampling for a k-column whole-plane factorisation of a plane whose short side is r. */
export function planeOversample(k: number, r: number): number {
  const l = Math.ceil((k + PLANE_MIN_OVERSAMPLE) / 8) * 8;
  return Math.max(0, Math.min(l, r) - k);
}

let planeBackend: Backend | undefined;

/**
 * Set (or clear, with undefined) the backend whole-plane factorisations use by default — e.g. the
 * thread pool of src-main/node/parallel, which gives bit-identical results to one thread.
 */
export function setPlaneBackend(backend: Backend | undefined): void {
  planeBackend = backend;
}

/**
 * The randomized SVD settings of a whole plane (f32 SIMD products, q = 2 power steps plus the 1.01×
 * accuracy check, oversampling `planeOversample`, on the registered backend unless `backend` is given):
 * factorPlane's, and the app's factor sets (src-main/node/server/factor.ts), so both take one path.
 * `energy` is ‖plane‖²_F; `powerIters` (default 2) is where the check starts.
 */
export function planeSvdOptions(
  k: number,
  kmax: number,
  o: { seed: number; energy: number; backend?: Backend; powerIters?: number },
): RandomizedSvdOptions {
  const q = o.powerIters ?? PLANE_POWER_ITERS;
  return {
    seed: o.seed,
    precision: 'f32',
    oversample: planeOversample(k, kmax),
    powerIters: q,
    accuracy: PLANE_ACCURACY,
    maxPowerIters: Math.max(q, PLANE_MAX_POWER_ITERS),
    frobeniusSquared: o.energy,
    finish: 'reuse',
    backend: o.backend ?? planeBackend,
  };
}

/** Planes above this many pixels on the short side use the randomized SVD when the engine has it. */
const RANDOMIZED_MIN_SIDE = 256;

export function factorPlane(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  opts: FactorOptions,
): PlaneFactors {
  const rects = tileGrid(width, height, opts.tile);
  const tiles: TileFactors[] = [];
  for (const rect of rects) {
    const { w, h } = rect;
    const kmax = Math.min(w, h);
    const randomized = kmax >= RANDOMIZED_MIN_SIDE && opts.maxRank !== undefined && opts.maxRank < kmax / 2;
    // The randomized path stores the plane in f32 (what its kernels read, and what `data` keeps anyway).
    const { a, meanQ, energy } = meanRemovedTile(plane, width, rect, opts, randomized);
    // Exactly rank-deficient tiles (flat paper, ruled lines, charts) need no dither: one-sided Jacobi skips
    // pairs whose smaller column is below ε·‖A‖_F (src-main/engine/linalg/jacobi-svd.ts), so it stops early.
    const mat: Matrix = { rows: h, cols: w, data: a };
    let svd: SvdResult;
    if (energy === 0) svd = zeroSvd(h, w);
    else if (randomized) {
      // One component beyond the cap, so the Eckart–Young spectral bound σ_{k+1} is known at rank k.
      const k = Math.min(kmax, Math.max(1, opts.maxRank ?? 1) + 1);
      svd = randomizedSvd(
        mat,
        k,
        planeSvdOptions(k, kmax, { seed: opts.seed ?? 1, energy, backend: opts.backend }),
      );
    } else svd = opts.tile === 0 ? fullSvd(mat) : jacobiSvd(mat);
    const data = a instanceof Float32Array ? a : new Float32Array(a);
    tiles.push({ rect, meanQ, energy, data, s: svd.s, U: svd.U, V: svd.V });
  }
  return { width, height, tile: opts.tile, meanStep: opts.meanRemoval ? opts.meanStep : 0, tiles };
}

/**
 * The tile at `rect` of the plane, less its quantised mean when `opts.meanRemoval` (meanQ mean steps, 0
 * otherwise), in f32 or f64, with ‖·‖²_F after the removal. A view of the caller's plane is only returned
 * unchanged (copyF32); it is copied before the mean is subtracted. With `into` (f64 only, ≥ w·h values), the
 * f64 tile is a view of it rather than a fresh array.
 */
export function meanRemovedTile(
  plane: ArrayLike<number>,
  width: number,
  rect: TileRect,
  opts: Pick<FactorOptions, 'meanRemoval' | 'meanStep'>,
  f32: boolean,
  into?: Float64Array,
): { a: Float32Array | Float64Array; meanQ: number; energy: number } {
  const { x, y, w, h } = rect;
  const cut = f32 ? copyF32(plane, width, x, y, w, h) : copyF64(plane, width, x, y, w, h, into);
  const meanQ = opts.meanRemoval ? Math.round(cut.sum / (w * h) / opts.meanStep) : 0;
  const a = meanQ !== 0 && cut.view ? cut.a.slice() : cut.a;
  let energy = cut.energy;
  if (meanQ !== 0) {
    const mean = meanQ * opts.meanStep;
    energy = 0;
    for (let k = 0; k < a.length; k++) {
      a[k] -= mean;
      energy += a[k] * a[k];
    }
  }
  return { a, meanQ, energy };
}

/**
 * The w×h window at (x, y) of the plane as f32, with its sum and ‖·‖²_F (f64 sums, row-major order).
 * A cut of whole rows of an f32 plane is returned as a view, not a copy: a whole-plane factorisation
 * then touches no fresh memory (first-touch page faults measured ≈ 25 µs per 4 KiB page on the bench
 * VM: a 12 MB copy cost 45–110 ms there). `view` says so; the caller copies before changing it.
 */
function copyF32(plane: ArrayLike<number>, width: number, x: number, y: number, w: number, h: number) {
  let a: Float32Array;
  if (plane instanceof Float32Array && x === 0 && w === width) a = plane.subarray(y * width, (y + h) * width);
  else {
    a = new Float32Array(w * h);
    for (let i = 0; i < h; i++) for (let j = 0; j < w; j++) a[i * w + j] = plane[(y + i) * width + x + j];
  }
  let sum = 0;
  let energy = 0;
  for (let k = 0; k < a.length; k++) {
    const v = a[k];
    sum += v;
    energy += v * v;
  }
  return { a, sum, energy, view: a.buffer === (plane as Float32Array).buffer };
}

/** As copyF32, in f64 (the tile path's Jacobi SVD works in f64), into a view of `into` when given. */
function copyF64(
  plane: ArrayLike<number>,
  width: number,
  x: number,
  y: number,
  w: number,
  h: number,
  into?: Float64Array,
) {
  const a = into ? into.subarray(0, w * h) : new Float64Array(w * h);
  let sum = 0;
  let energy = 0;
  for (let i = 0; i < h; i++)
    for (let j = 0; j < w; j++) {
      const v = plane[(y + i) * width + x + j];
      a[i * w + j] = v;
      sum += v;
      energy += v * v;
    }
  return { a, sum, energy, view: false };
}

function zeroSvd(h: number, w: number): SvdResult {
  return {
    s: new Float64Array(0),
    U: { rows: h, cols: 0, data: new Float64Array(0) },
    V: { rows: w, cols: 0, data: new Float64Array(0) },
  };
}
