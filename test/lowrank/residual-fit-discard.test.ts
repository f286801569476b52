// A lazy residual fit (src-main/engine/lowrank/residual-fit.ts) discards the q of each encode as the next one is
// quantised over it (src-main/engine/codec/resident-plane.ts discardQ) and quantises the kept encode again when
// it was not the last (wavelet-plane requantised). Its result must be the one a fit on planes that are not
// resident gives (nothing discarded there): same steps, bytes, encode count, squared error and q, and the
// recorded encode of the kept bytes (coded-planes, read by the report's decode) must hold that q.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { recallCode, recordingCodes } from '../../src-main/engine/codec/coded-planes';
import { discardQ } from '../../src-main/engine/codec/resident-plane';
import { ARENA_MIN_PIXELS, setArenaMinPixels } from '../../src-main/engine/codec/wasm/arena';
import {
  analysePlane,
  codeAnalysed,
  codedSquaredError,
  reconstructCoded,
  requantised,
} from '../../src-main/engine/codec/wavelet-plane';
import { type FitTolerance, fitResidual } from '../../src-main/engine/lowrank/residual-fit';
import { digest, rampPlane } from '../codec/plane-samples';

const W = 257;
const H = 129;
const plane = rampPlane(W, H, 5);

/** The fit's result as plain values; `resident`: the plane lives in its own WebAssembly memory. */
function fitted(resident: boolean, target: number, ratio: number, elasticity: number) {
  setArenaMinPixels(resident ? 1 : Number.POSITIVE_INFINITY);
  try {
    return recordingCodes(() => {
      const a = analysePlane(plane, W, H);
      const tol: FitTolerance = { close: 0.97, aim: 0.99, lazy: true, elasticity };
      const fit = fitResidual([a], [1], [1], target, ratio, () => {}, tol).fit;
      if (!fit) throw new Error('no fit');
      const c = fit.coded[0];
      const recalled = recallCode(fit.bytes[0], W, H, fit.steps[0], 2);
      return {
        steps: fit.steps,
        bytes: digest(fit.bytes[0]),
        codes: fit.codes,
        sse: fit.sse,
        q: digest(c.q),
        offsets: digest(c.offsets as Float64Array),
        rebuilt: digest(reconstructCoded(a, c)),
        recalledQ: recalled && digest(recalled.q),
        sizes: fit.points.map((p) => p.bits / 8),
      };
    });
  } finally {
    setArenaMinPixels(ARENA_MIN_PIXELS);
  }
}

describe('a lazy residual fit on a resident plane', () => {
  afterAll(() => setArenaMinPixels(ARENA_MIN_PIXELS));

  // Targets, first-step calibration and elasticity chosen (by a search on this plane) so that the kept encode is
  // the first of three (the two after it overshoot), the second of three, or the last.
  it.each([
    [3000, 1, 0.3, 0],
    [5000, 0.6, 0.3, 1],
    [12000, 1, 1.2, -1],
  ])(
    'target %i, ratio %f, elasticity %f: the same result as on a plane that is not resident',
    (target, ratio, el, keptAt) => {
      const got = fitted(true, target, ratio, el);
      const want = fitted(false, target, ratio, el);
      expect(got).toEqual(want);
      expect(got.recalledQ).toBe(got.q);
      // The case is the one named: the kept encode's size is at that position among the real encodes.
      const kept = got.sizes.indexOf(Math.max(...got.sizes.filter((s) => s <= target)));
      expect(kept).toBe(keptAt < 0 ? got.sizes.length - 1 : keptAt);
    },
  );
});

describe('discardQ and requantised', () => {
  beforeAll(() => setArenaMinPixels(1));
  afterAll(() => setArenaMinPixels(ARENA_MIN_PIXELS));

  it('a discarded encode refuses to give its q; made again, it is the encode as coded', () => {
    setArenaMinPixels(Number.POSITIVE_INFINITY);
    const b = analysePlane(plane, W, H);
    const coded = codeAnalysed(b, 6, 2);
    const want = { bytes: digest(coded.bytes), q: digest(coded.q), sse: codedSquaredError(b, coded) };
    setArenaMinPixels(1);
    const a = analysePlane(plane, W, H);
    // Its q is not read before the discard (reading it would make it an array, which is kept).
    const first = codeAnalysed(a, 6, 2);
    expect(discardQ(first)).toBe(true);
    codeAnalysed(a, 9, 2);
    expect(() => first.q).toThrow(/discarded/);
    const again = requantised(a, first, 6);
    expect(again.bytes).toBe(first.bytes);
    expect({ bytes: digest(again.bytes), q: digest(again.q), sse: codedSquaredError(a, again) }).toEqual(
      want,
    );
  });

  it('leaves a result that is not resident as it is', () => {
    setArenaMinPixels(Number.POSITIVE_INFINITY);
    try {
      const a = analysePlane(plane, W, H);
      const c = codeAnalysed(a, 6, 2);
      expect(discardQ(c)).toBe(false);
      codeAnalysed(a, 9, 2);
      expect(c.q.some((v) => v !== 0)).toBe(true);
    } finally {
      setArenaMinPixels(1);
    }
  });
});
