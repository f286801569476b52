// A wide band edge is a step at one position; the scan's own row structure is not (src-main/engine/clean/
// band-ramp.ts carriedShare, banding-wide.ts THIN_PARTNER). scikit-image's
// text.png has a shading ramp across every column (rows 93–100, 8 grey levels) that the wide pass took for
// a band edge beside a true one, and whose end, taken as the partner of a true edge nine rows before it,
// made both be dropped as a thin feature. The planes here are synthetic: a flat grey with noise σ 3 and
// known steps, so every expectation follows from the construction.
import { describe, expect, it } from 'vitest';
import { carriedShare } from '../../src-main/engine/clean/band-ramp';
import { wideBandProfile } from '../../src-main/engine/clean/banding-wide';
import { removedShare } from './banding-removal';
import { gaussian, rng } from './helpers';

const scratch = new Float64Array(64);

describe('carriedShare', () => {
  it('a step at one position carries its whole window step', () => {
    const step = new Float64Array(100);
    step[50] = 8;
    expect(carriedShare(step, 50, 50, 8, scratch)).toBeCloseTo(1, 10);
  });

  it('a ramp of 1 grey level per position: its windows (4 px each) read 4 at any position, the position itself carries none above the slope beside it', () => {
    const step = new Float64Array(100);
    for (let x = 46; x <= 54; x++) step[x] = 1;
    expect(carriedShare(step, 50, 50, 4, scratch)).toBeCloseTo(0, 10);
  });

  it('a band edge of 8 on a shading slope of 1 per position: the slope beside it is taken off', () => {
    const step = new Float64Array(100).fill(1);
    step[50] += 8;
    // Window step 8 + 4·1; own difference 9 less the slope 1.
    expect(carriedShare(step, 50, 50, 12, scratch)).toBeCloseTo(8 / 12, 10);
  });
});

/** A 320 × `lines` plane along `rows` (position = row): 128 + `shape(row)` + noise σ 3, rounded. */
function plane(shape: (row: number) => number, seed: number, lines = 320, len = 400) {
  const g = gaussian(rng(seed));
  const data = new Float32Array(lines * len);
  for (let y = 0; y < len; y++)
    for (let x = 0; x < lines; x++) data[y * lines + x] = Math.round(128 + shape(y) + 3 * g());
  return { data, width: lines, height: len };
}

/** The piecewise-constant profile of `edges` (each adds its step after its position), zero mean. */
function steps(len: number, edges: Array<[number, number]>): Float64Array {
  const p = new Float64Array(len);
  for (const [at, s] of edges) for (let x = at + 1; x < len; x++) p[x] += s;
  const m = p.reduce((t, v) => t + v, 0) / len;
  return p.map((v) => v - m);
}

describe('wide bands beside the scan’s own row structure', () => {
  it('a shading ramp of 8 grey levels over rows 93–100 beside band edges at rows 86 and 250 is not removed as a band edge', () => {
    const bands = steps(400, [
      [86, 8],
      [250, -8],
    ]);
    const ramp = (y: number) => Math.min(8, Math.max(0, y - 92));
    for (const seed of [1, 2, 3]) {
      const p = plane((y) => bands[y] + ramp(y), seed);
      const w = wideBandProfile(p.data, p.width, p.height, 'rows', 255);
      expect(w.detected, `seed ${seed}`).toBe(true);
      // No step inside the ramp: it stays in the image as it is.
      for (let y = 92; y < 101; y++)
        expect(Math.abs(w.profile[y + 1] - w.profile[y]), `seed ${seed} row ${y}`).toBeLessThan(1);
      expect(removedShare(bands, w.profile), `seed ${seed}`).toBeGreaterThan(0.95);
    }
  });

  it('a band edge of −8 with a step of +2.5 nine rows later: the edge is kept, not dropped with it as a thin feature', () => {
    const truth = steps(400, [
      [90, -8],
      [99, 2.5],
      [250, 8],
    ]);
    for (const seed of [1, 2, 3]) {
      const p = plane((y) => truth[y], seed);
      const w = wideBandProfile(p.data, p.width, p.height, 'rows', 255);
      expect(w.detected, `seed ${seed}`).toBe(true);
      // The step of 2.5 is dropped as the smaller of the close pair; the rest is found: 1 − ‖s − ŝ‖²/‖s‖²
      // is then the energy of a 2.5 step at row 99 against the whole (about 0.9).
      expect(w.profile[91] - w.profile[90], `seed ${seed}`).toBeLessThan(-6);
      expect(removedShare(truth, w.profile), `seed ${seed}`).toBeGreaterThan(0.8);
    }
  });
});
