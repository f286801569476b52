// The rate model's sample of a resident plane (src-main/engine/codec/resident-sample.ts): per band, the
// magnitudes at every stride-th raster position, sorted by the kernel's radix sort, must be the very lists the
// definition gives (band map, index order, a typed array's sort), so that every estimate, hence every step and
// file, stays the same; and the arena's work region is used as scratch only while nothing in it is read.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { residentArena } from '../../src-main/engine/codec/resident-plane';
import { residentSample } from '../../src-main/engine/codec/resident-sample';
import { ARENA_MIN_PIXELS, setArenaMinPixels } from '../../src-main/engine/codec/wasm/arena';
import {
  type AnalysedPlane,
  analysePlane,
  codeAnalysed,
  estimateBits,
  estimateSquaredError,
} from '../../src-main/engine/codec/wavelet-plane';
import { initEngine } from '../../src-main/engine/linalg';
import { rampPlane } from './plane-samples';

/** The definition: every stride-th coefficient in index order, grouped by band through the band map, sorted. */
function definedSample(a: AnalysedPlane, stride: number): Float64Array[] {
  const lists: number[][] = a.bands.map(() => []);
  for (let i = 0; i < a.coeffs.length; i += stride) lists[a.map[i]].push(Math.abs(a.coeffs[i]));
  return lists.map((l) => Float64Array.from(l).sort());
}

/** A plane with ties, exact zeros and magnitudes over many octaves (every radix digit varies). */
function mixedPlane(w: number, h: number): Float32Array {
  const p = rampPlane(w, h, 11);
  for (let i = 0; i < p.length; i++) {
    if (i % 5 === 0) p[i] = 0;
    else if (i % 13 === 0) p[i] = 1e6 * Math.sin(i);
    else if (i % 17 === 0) p[i] = 2 ** -30 * (i % 3);
  }
  return p;
}

describe("the rate model's sample of a resident plane", () => {
  beforeAll(async () => {
    await initEngine();
    setArenaMinPixels(1);
  });
  afterAll(() => setArenaMinPixels(ARENA_MIN_PIXELS));

  it.each([
    [301, 257, 7],
    [300, 256, 31],
    [97, 641, 7],
  ])('%i×%i at 1 in %i: the defined lists, value for value', (w, h, stride) => {
    for (const plane of [rampPlane(w, h, 3), mixedPlane(w, h)]) {
      const a = analysePlane(plane, w, h);
      expect(residentArena(a)).toBeDefined();
      const got = residentSample(a, a.bands, w, stride);
      expect(got).toBeDefined();
      const want = definedSample(a, stride);
      expect(got?.map((v) => Array.from(v))).toEqual(want.map((v) => Array.from(v)));
      // Sorted, and long enough to have exercised the radix passes (not only trivial digits).
      expect(want.reduce((s, v) => s + v.length, 0)).toBeGreaterThan(1000);
    }
  });

  it('gives the estimates of the plane analysed without an arena, bit for bit', () => {
    const [w, h] = [301, 257];
    const plane = mixedPlane(w, h);
    const steps = [0.01, 0.7, 3, 40, 900];
    const resident = analysePlane(plane, w, h);
    expect(residentArena(resident)).toBeDefined();
    const got = steps.map((s) => [estimateBits(resident, s), estimateSquaredError(resident, s)]);
    setArenaMinPixels(Number.POSITIVE_INFINITY);
    try {
      const copy = analysePlane(plane, w, h);
      expect(residentArena(copy)).toBeUndefined();
      expect(got).toEqual(steps.map((s) => [estimateBits(copy, s), estimateSquaredError(copy, s)]));
    } finally {
      setArenaMinPixels(1);
    }
  });

  it('leaves a result quantised in the arena alone: no scratch while its q is there', () => {
    const [w, h] = [301, 257];
    const a = analysePlane(rampPlane(w, h, 5), w, h);
    const c = codeAnalysed(a, 2, 2);
    const q = c.q.slice();
    expect(residentSample(a, a.bands, w, 7)).toBeUndefined();
    expect(c.q).toEqual(q);
  });
});
