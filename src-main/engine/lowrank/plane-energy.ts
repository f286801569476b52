/**
 * The energy of a scan's coded planes, Σ_k w_k·Σ p_k², which a residual-only file reports as its base error
 * (rank 0: ./encode). It needs only the source, so with a second thread it is summed there while this one
 * measures the written file (./scan-finish): on an 8-megapixel grey scan it is one sequential pass (each add
 * waits for the one before, so about 10 ms) that the other thread, idle while this one finishes the last
 * encode and builds the file, does instead. Either thread runs the same function on the same samples in the
 * same order, so the value is the same bit for bit.
 */
import { type ExactF32Samples, isExactF32Samples } from '../../contract';
import type { SideRunner } from './side-jobs';

/** Σ p[i]², in one running sum in index order. */
export function sumSquares(p: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < p.length; i++) s += p[i] * p[i];
  return s;
}

/** Σ_k weights[k]·sumSquares(planes[k]), added plane by plane in order. */
export function planeEnergy(planes: ArrayLike<number>[], weights: number[]): number {
  return planes.reduce((s: number, p, k) => s + weights[k] * sumSquares(p), 0);
}

/**
 * {@link planeEnergy} started on the other thread when `side` is given and every plane lies in shared memory
 * (a grey scan's decoded plane, float or its integer samples: no copy is sent), else summed here at once; the
 * returned function gives it.
 */
export function startPlaneEnergy(
  planes: ArrayLike<number>[],
  weights: number[],
  side?: SideRunner,
): () => number {
  const shared = (p: ArrayLike<number>): p is ExactF32Samples =>
    typeof SharedArrayBuffer === 'function' && isExactF32Samples(p) && p.buffer instanceof SharedArrayBuffer;
  if (side && planes.every(shared)) return side('plane-energy', { planes, weights });
  const energy = planeEnergy(planes, weights);
  return () => energy;
}
