// The energy of a scan's coded planes (src-main/engine/lowrank/plane-energy.ts), which a residual-only file
// reports as its base error: summed on the second thread when the planes lie in shared memory, else here, and
// the same value bit for bit either way (the same running sums in the same order as the sum it replaced in
// encode.ts, Σ_k w_k·Σ p_k² plane by plane).
import { describe, expect, it } from 'vitest';
import { planeEnergy, startPlaneEnergy, sumSquares } from '../../src-main/engine/lowrank/plane-energy';
import { runHere, type SideRunner } from '../../src-main/engine/lowrank/side-jobs';
import { lcg } from '../helpers/lcg';

function plane(n: number, seed: number, shared: boolean): Float32Array {
  const next = lcg(seed);
  const p = shared ? new Float32Array(new SharedArrayBuffer(4 * n)) : new Float32Array(n);
  for (let i = 0; i < n; i++) p[i] = Math.round(next() * 255) - 0.5;
  return p;
}

/** A runner that logs the jobs offered and computes each when joined. */
function logging(log: string[]): SideRunner {
  return (name, args) => {
    log.push(name);
    return () => runHere(name, args)();
  };
}

describe('plane energy', () => {
  it('is Σ p² in one running sum, plane by plane with its weight', () => {
    expect(sumSquares([1, 2, 3])).toBe(14);
    expect(planeEnergy([[1, 2], [3]], [0.5, 2])).toBe(0.5 * 5 + 2 * 9);
    const p = plane(5000, 1, false);
    let s = 0;
    for (let i = 0; i < p.length; i++) s += p[i] * p[i];
    expect(sumSquares(p)).toBe(s);
  });

  it('planes in shared memory are summed by a side job, the same value as here', () => {
    const planes = [plane(7777, 2, true), plane(7777, 3, true)];
    const weights = [0.6, 0.4];
    const want = planes.reduce((s, p, k) => s + weights[k] * sumSquares(p), 0);
    const log: string[] = [];
    const join = startPlaneEnergy(planes, weights, logging(log));
    expect(log).toEqual(['plane-energy']);
    expect(join()).toBe(want);
    expect(startPlaneEnergy(planes, weights)()).toBe(want);
  });

  it('planes not in shared memory (they would be copied to the other thread) are summed here', () => {
    const planes = [plane(999, 4, false)];
    const log: string[] = [];
    expect(startPlaneEnergy(planes, [1], logging(log))()).toBe(sumSquares(planes[0]));
    expect(log).toEqual([]);
  });
});
