// Reading a resident plane's quantised values where they lie (src-main/engine/codec/resident-plane.ts
// residentQView, used by the report's residual check, src-main/engine/lowrank/residual-check.ts) and giving a
// handed-out reconstruction's memory back (giveBackWork, used by the report's decode): the values equal the
// TypeScript reference's (kernels and coder port off), the check still refuses a wrong coefficient, and a
// plane decoded again after a give-back is rebuilt in its own memory with the same bits.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { forgetCodes, recordingCodes } from '../../src-main/engine/codec/coded-planes';
import { bandTable } from '../../src-main/engine/codec/coeff-coder';
import { decodeInPlaceV2 } from '../../src-main/engine/codec/coeff-coder-resident';
import { giveBackWork, residentArena, residentQView } from '../../src-main/engine/codec/resident-plane';
import { ARENA_MIN_PIXELS, PlaneArena, setArenaMinPixels } from '../../src-main/engine/codec/wasm/arena';
import type { LentRegion, QView } from '../../src-main/engine/codec/wasm/coder-runtime';
import {
  analysePlane,
  codeAnalysed,
  decodePlane,
  reconstructCoded,
} from '../../src-main/engine/codec/wavelet-plane';
import { bandsFor, levelsFor } from '../../src-main/engine/codec/wavelet-transform';
import { startResidualCheck } from '../../src-main/engine/lowrank/residual-check';
import { runHere } from '../../src-main/engine/lowrank/side-jobs';
import { digest, rampPlane, reference } from './plane-samples';

/** Odd sizes, a single pixel, a single row and a single column. */
const SIZES: Array<[number, number]> = [
  [1, 1],
  [61, 1],
  [1, 45],
  [97, 83],
];
const STEPS = [0.7, 4, 19];

describe('resident quantised values read in place', () => {
  beforeAll(() => setArenaMinPixels(1));
  afterAll(() => {
    setArenaMinPixels(ARENA_MIN_PIXELS);
    forgetCodes();
  });

  it.each(SIZES)(
    '%i×%i: the view holds the reference q, also for a result whose region was reused',
    (w, h) => {
      const p = rampPlane(w, h, 5 * w + h);
      const ref = reference(() => {
        const a = analysePlane(p, w, h);
        return STEPS.map((s) => digest(codeAnalysed(a, s, 2).q));
      });
      const a = analysePlane(p, w, h);
      expect(residentArena(a)).toBeDefined();
      const coded = STEPS.map((s) => codeAnalysed(a, s, 2));
      // Last first: the last code owns the region; each earlier one is loaded back from its non-zeros.
      for (let k = STEPS.length - 1; k >= 0; k--) {
        const view = residentQView(coded[k]);
        expect(view).toBeDefined();
        // An i16 view where every |q| fits (each value the reference's).
        expect(view).toBeInstanceOf(Int16Array);
        expect(digest(Int32Array.from(view as QView))).toBe(ref[k]);
      }
      // Once a result's q was made into an array, that array is the one to read.
      expect(digest(coded[0].q)).toBe(ref[0]);
      expect(residentQView(coded[0])).toBeUndefined();
      expect(residentQView({ q: new Int32Array(w * h) })).toBeUndefined();
    },
  );

  it('a decode into a lent i16 q whose values do not fit one decodes into an i32 q instead, with the same values', () => {
    const [w, h] = [97, 83];
    const bands = bandsFor(w, h, levelsFor(w, h));
    // Grey levels at step 3 (every |q| fits an i16), and × 400 at step 0.05 (LL magnitudes far past one).
    for (const [scale, step, narrow] of [
      [1, 3, true],
      [400, 0.05, false],
    ] as const) {
      const p = rampPlane(w, h, 13).map((v) => scale * v);
      const ref = reference(() => codeAnalysed(analysePlane(p, w, h), step, 2));
      const arena = PlaneArena.create(w, h) as PlaneArena;
      const region = arena.lendWork(bandTable(bands)) as LentRegion;
      expect(region.narrow).toBe(true);
      const got = decodeInPlaceV2(
        ref.bytes,
        w * h,
        w,
        bands,
        (q, nonZero) => ({ narrow: q instanceof Int16Array, q: digest(Int32Array.from(q)), nonZero }),
        region,
      );
      arena.endLoan();
      arena.release();
      expect(got).toEqual({ narrow, q: digest(ref.q), nonZero: ref.nonZero });
    }
  });

  it('the residual check passes on the resident q and refuses when one resident value differs', () => {
    const [w, h, step] = [97, 83, 3];
    forgetCodes();
    const a = analysePlane(rampPlane(w, h, 8), w, h);
    const c = recordingCodes(() => codeAnalysed(a, step, 2));
    const check = () => startResidualCheck(runHere, { steps: [step], bytes: [c.bytes] }, w, h, 'b.tif')();
    expect(check).not.toThrow();
    const view = residentQView(c) as QView;
    view[view.length >> 1] += 1;
    expect(check).toThrow(
      'b.tif: the residual layer just coded for plane 0 decodes to other coefficients than it was coded from',
    );
    // The check decoded into the region (the view's values are now the decoded ones): undo the change where
    // the recorded values are now, the q loaded back into the region.
    const again = residentQView(c) as QView;
    again[again.length >> 1] -= 1;
    expect(check).not.toThrow();
  });

  it.each(SIZES)('%i×%i: decodes after a give-back run in the plane’s memory, with the same bits', (w, h) => {
    const p = rampPlane(w, h, 3 * w + 7 * h);
    const ref = reference(() => {
      const a = analysePlane(p, w, h);
      return STEPS.map((s) => digest(decodePlane(codeAnalysed(a, s, 2).bytes, w, h, s, 2)));
    });
    forgetCodes();
    const a = analysePlane(p, w, h);
    const arena = residentArena(a);
    const got = recordingCodes(() =>
      STEPS.map((s) => {
        const bytes = codeAnalysed(a, s, 2).bytes;
        const x = decodePlane(bytes, w, h, s, 2);
        const inPlace = x.buffer === arena?.memory.buffer;
        const d = digest(x);
        // A hand-out not given back keeps its memory: the next decode takes the copying path.
        const again = decodePlane(bytes, w, h, s, 2);
        const copied = again.buffer !== arena?.memory.buffer;
        expect(digest(x)).toBe(d);
        giveBackWork(x);
        return { d, inPlace, copied };
      }),
    );
    forgetCodes();
    expect(got.map((g) => g.d)).toEqual(ref);
    expect(got.every((g) => g.inPlace && g.copied)).toBe(true);
  });

  // The rebuild fills the arena's work region, whose upper half is q (src-main/engine/codec/wasm/arena.ts):
  // the rebuilt values and every coded result's q (kept as its non-zeros first) still equal the reference's.
  it.each(SIZES)('%i×%i: a rebuild over q keeps every q and gives the reference bits', (w, h) => {
    const p = rampPlane(w, h, 11 * w + 5 * h);
    const ref = reference(() => {
      const a = analysePlane(p, w, h);
      const coded = STEPS.map((s) => codeAnalysed(a, s, 2));
      return { x: coded.map((c) => digest(reconstructCoded(a, c))), q: coded.map((c) => digest(c.q)) };
    });
    const a = analysePlane(p, w, h);
    const coded = STEPS.map((s) => codeAnalysed(a, s, 2));
    // Rebuild each, last coded first and then the others: each rebuild overwrites the q region.
    const order = [2, 0, 1];
    const x = order.map((k) => digest(reconstructCoded(a, coded[k])));
    expect(x).toEqual(order.map((k) => ref.x[k]));
    expect(order.map((k) => digest(Int32Array.from(residentQView(coded[k]) as QView)))).toEqual(
      order.map((k) => ref.q[k]),
    );
    // Coding again after the rebuilds quantises into the region afresh: the same bytes as the first time.
    expect(digest(codeAnalysed(a, STEPS[1], 2).q)).toBe(ref.q[1]);
  });

  it('while a rebuild is handed out the plane takes the copying paths, and its q is not loaded over it', () => {
    const [w, h, step] = [97, 83, 4];
    const p = rampPlane(w, h, 21);
    const ref = reference(() => digest(codeAnalysed(analysePlane(p, w, h), step, 2).q));
    forgetCodes();
    const a = analysePlane(p, w, h);
    const c = recordingCodes(() => codeAnalysed(a, step, 2));
    const x = decodePlane(c.bytes, w, h, step, 2);
    const before = digest(x);
    expect(residentArena(a)).toBeUndefined();
    expect(residentQView(c)).toBeUndefined();
    expect(digest(codeAnalysed(a, step, 2).q)).toBe(ref);
    expect(digest(x)).toBe(before);
    giveBackWork(x);
    forgetCodes();
    expect(residentArena(a)).toBeDefined();
    expect(digest(Int32Array.from(residentQView(c) as QView))).toBe(ref);
  });
});
