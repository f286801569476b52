// The report's SSIM cut into pieces shared between two threads (src-main/engine/lowrank/side-jobs.ts
// ssimPlanesSplit): whichever thread computes which piece, and in whatever order they finish, the value must be
// ssimPlanes' (src-main/engine/metrics/ssim.ts) bit for bit. The "other thread" here is a runner that keeps some
// pieces for later and computes the rest at once, as a worker that got to a piece first would.
import { describe, expect, it } from 'vitest';
import { runHere, type SideRunner, ssimPlanesSplit } from '../../src-main/engine/lowrank/side-jobs';
import { ssimPlanes } from '../../src-main/engine/metrics';
import { lcg } from '../helpers/lcg';

/** Grey-level planes: a ramp, and the ramp with seeded noise (rounded, as decoded samples are). */
function pair(w: number, h: number, seed: number): [Float32Array, Float32Array] {
  const next = lcg(seed);
  const a = Float32Array.from({ length: w * h }, (_, i) => ((i % w) * 5 + Math.floor(i / w) * 3) % 256);
  const b = a.map((v) => Math.round(v + (next() - 0.5) * 30));
  return [a, b];
}

/**
 * A runner whose "other thread" computes the pieces it is offered with an index in `early` at once (it
 * started them) and leaves the others to be computed when joined (taken back by the calling thread). Records
 * the order of the joins.
 */
function splitRunner(early: (i: number) => boolean, joins: number[]): SideRunner {
  let n = 0;
  return (name, args) => {
    const i = n++;
    const done = early(i) ? runHere(name, args)() : undefined;
    return () => {
      joins.push(i);
      return done ?? runHere(name, args)();
    };
  };
}

const SIZES: Array<[number, number, number]> = [
  [40, 90, 1],
  [37, 23, 1],
  [23, 12, 1],
  [64, 50, 3],
];

describe('ssimPlanesSplit gives ssimPlanes bit for bit', () => {
  it.each(SIZES)('%i×%i, %i plane(s), any share of the pieces on the other thread', (w, h, planes) => {
    const ps = Array.from({ length: planes }, (_, c) => pair(w, h, 7 + c));
    const a = ps.map((p) => p[0]);
    const b = ps.map((p) => p[1]);
    const ref = ssimPlanes(a, b, w, h, 255);
    expect(ref).toBeLessThan(1);
    for (const early of [() => true, () => false, (i: number) => i < 3, (i: number) => i % 2 === 1]) {
      const joins: number[] = [];
      let along = 0;
      const got = ssimPlanesSplit(splitRunner(early, joins), a, b, w, h, 255, () => along++);
      expect(got).toBe(ref);
      expect(along).toBe(1);
      // Taken back from the last piece down, so the two threads meet in the middle.
      expect(joins).toEqual([...joins].sort((x, y) => y - x));
    }
    expect(ssimPlanesSplit(runHere, a, b, w, h, 255)).toBe(ref);
  });

  it('a plane with one window row (no split) still runs the other work once', () => {
    const [a, b] = pair(30, 11, 5);
    let along = 0;
    expect(ssimPlanesSplit(runHere, [a], [b], 30, 11, 255, () => along++)).toBe(
      ssimPlanes([a], [b], 30, 11, 255),
    );
    expect(along).toBe(1);
  });
});
