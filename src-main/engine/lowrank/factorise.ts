/**
 * Factor a plane, whole or tile by tile, into σ, U, V. Tiles use the exact one-sided Jacobi SVD; a whole
 * plane uses the engine's randomized SVD when it is available and the plane is large, else Jacobi.
 */

import { type TileRect, tileGrid } from '../codec/quantised';
import { fullSvd, jacobiSvd, type Matrix, randomizedSvd, type SvdResult } from '../linalg';

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
    const { x, y, w, h } = rect;
    const a = new Float64Array(w * h);
    let sum = 0;
    for (let i = 0; i < h; i++)
      for (let j = 0; j < w; j++) {
        const v = plane[(y + i) * width + x + j];
        a[i * w + j] = v;
        sum += v;
      }
    const meanQ = opts.meanRemoval ? Math.round(sum / (w * h) / opts.meanStep) : 0;
    const mean = meanQ * opts.meanStep;
    let energy = 0;
    for (let k = 0; k < a.length; k++) {
      a[k] -= mean;
      energy += a[k] * a[k];
    }
    // Exactly rank-deficient tiles (flat paper, ruled lines, charts) need no dither: one-sided Jacobi skips
    // pairs whose smaller column is below ε·‖A‖_F (src-main/engine/linalg/jacobi-svd.ts), so it stops early.
    const mat: Matrix = { rows: h, cols: w, data: a };
    let svd: SvdResult;
    const kmax = Math.min(w, h);
    if (energy === 0) svd = zeroSvd(h, w);
    else if (kmax >= RANDOMIZED_MIN_SIDE && opts.maxRank !== undefined && opts.maxRank < kmax / 2)
      // Halko, Martinsson & Tropp 2011, Alg. 4.4 with q = 4 power steps: ≈1.0005× the optimal Frobenius error.
      // One component beyond the cap, so the Eckart–Young spectral bound σ_{k+1} is known at rank k.
      svd = randomizedSvd(mat, Math.min(kmax, Math.max(1, opts.maxRank) + 1), {
        seed: opts.seed ?? 1,
        powerIters: 4,
      });
    else svd = opts.tile === 0 ? fullSvd(mat) : jacobiSvd(mat);
    tiles.push({ rect, meanQ, energy, data: new Float32Array(a), s: svd.s, U: svd.U, V: svd.V });
  }
  return { width, height, tile: opts.tile, meanStep: opts.meanRemoval ? opts.meanStep : 0, tiles };
}

function zeroSvd(h: number, w: number): SvdResult {
  return {
    s: new Float64Array(0),
    U: { rows: h, cols: 0, data: new Float64Array(0) },
    V: { rows: w, cols: 0, data: new Float64Array(0) },
  };
}
