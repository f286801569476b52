// The work another thread does beside a resident plane's range coding (src-main/engine/codec/coded-aside.ts, the
// 'aside' piece of arena-split.ts): the squared error of the plane rebuilt from the encode's q, and q's non-zeros.
// Whatever that thread got done, the coded bytes, the error and the non-zeros equal the TypeScript reference's
// bit for bit: the piece computed as it is offered (all of it), taken back after the encode (none of it: the
// error is then computed as before), cut short (the error only), and on a real worker thread.
import { describe, expect, it } from 'vitest';
import {
  type ArenaPassArgs,
  type ArenaRunner,
  runArenaPass,
  withArenaHelper,
} from '../../src-main/engine/codec/arena-split';
import { errorsBeside, listedBeside } from '../../src-main/engine/codec/coded-aside';
import { bandErrorsResident } from '../../src-main/engine/codec/resident-bands';
import { keepNonZeros, residentArena } from '../../src-main/engine/codec/resident-plane';
import type { PlaneArena } from '../../src-main/engine/codec/wasm/arena';
import {
  type AnalysedPlane,
  analysePlane,
  type CodedCoefficients,
  codeAnalysed,
  codedSquaredError,
} from '../../src-main/engine/codec/wavelet-plane';
import { arenasAtEverySize, offeredWithPause, realSideThread } from '../helpers/side-thread';
import { digest, rampPlane, reference } from './plane-samples';

/** The pieces each runner was given, by operation. */
const seen: string[] = [];
/** Every piece computed at once, on this thread, as it is offered (before the encode runs). */
const atOnce: ArenaRunner = (a) => {
  seen.push(a.op);
  const r = runArenaPass(a);
  return () => r;
};
/** Every piece left unstarted and taken back by the caller when it joins (after the encode, for 'aside'). */
const takenBack: ArenaRunner = (a) => {
  seen.push(a.op);
  return () => runArenaPass(a);
};

/** A step at which q is mostly zeros, as in a residual layer (a list of its non-zeros then pays). */
const STEP = 12;

/** The non-zeros of q in raster order. */
function nonZeros(q: Int32Array): { at: number[]; v: number[] } {
  const at: number[] = [];
  const v: number[] = [];
  q.forEach((x, i) => {
    if (x !== 0) {
      at.push(i);
      v.push(x);
    }
  });
  return { at, v };
}

function codedAt(p: Float32Array, w: number, h: number, step = STEP) {
  const a = analysePlane(p, w, h);
  const c = codeAnalysed(a, step, 2);
  return { a, c };
}

/** What the tests compare: bytes, error and non-zeros. */
function figures(a: AnalysedPlane, c: CodedCoefficients) {
  return { bytes: digest(c.bytes), sse: codedSquaredError(a, c), nonZero: nonZeros(c.q) };
}

/** The TypeScript reference's figures of the plane coded at STEP. */
function referenceFigures(p: Float32Array, w: number, h: number) {
  return reference(() => {
    const { a, c } = codedAt(p, w, h);
    return figures(a, c);
  });
}

/** The figures equal the reference's, the error bit for bit. */
function expectSame(got: ReturnType<typeof figures>, ref: ReturnType<typeof figures>): void {
  expect(got.bytes).toBe(ref.bytes);
  expect(Object.is(got.sse, ref.sse)).toBe(true);
  expect(got.nonZero).toEqual(ref.nonZero);
}

describe('squared error and non-zeros worked out beside an encode', () => {
  arenasAtEverySize();
  const side = realSideThread();

  it.each([
    [101, 77],
    [257, 193],
  ])('%i×%i: computed as offered, they are the reference’s, and the check’s listing takes them', (w, h) => {
    const p = rampPlane(w, h, 7 * w + h);
    const ref = referenceFigures(p, w, h);
    expect(ref.nonZero.at.length).toBeGreaterThan(0);
    expect(ref.nonZero.at.length).toBeLessThan((w * h) / 2);
    seen.length = 0;
    withArenaHelper(atOnce, () => {
      const { a, c } = codedAt(p, w, h);
      expect(seen).toContain('aside');
      const arena = residentArena(a) as PlaneArena;
      expect(arena).toBeDefined();
      const sums = errorsBeside(c) as Float64Array;
      expect(sums).toBeDefined();
      const listed = listedBeside(c);
      expect(listed?.at.buffer).toBeInstanceOf(SharedArrayBuffer);
      expect({ at: Array.from(listed?.at ?? []), v: Array.from(listed?.v ?? []) }).toEqual(ref.nonZero);
      // The sums are the ones the split 'errors' pass gives for this q (computed again here, not taken).
      const par = (bi: number) => [
        c.steps[bi],
        (c.offsets as Float64Array)[2 * bi],
        (c.offsets as Float64Array)[2 * bi + 1],
      ];
      expect(Array.from(bandErrorsResident(arena, a.bands, par))).toEqual(Array.from(sums));
      // The report's check lists the same arrays instead of listing q again.
      expect(keepNonZeros(c)?.at).toBe(listed?.at);
      expectSame(figures(a, c), ref);
    });
  });

  it('taken back after the encode, it does nothing, and the error is computed as before', () => {
    const [w, h] = [257, 193];
    const p = rampPlane(w, h, 3);
    const ref = referenceFigures(p, w, h);
    seen.length = 0;
    withArenaHelper(takenBack, () => {
      const { a, c } = codedAt(p, w, h);
      expect(seen).toContain('aside');
      expect(errorsBeside(c)).toBeUndefined();
      expect(listedBeside(c)).toBeUndefined();
      expectSame(figures(a, c), ref);
      expect(seen).toContain('errors');
    });
  });

  it('cut short: nothing once stopped, the sums alone when the list does not fit, else both', () => {
    const [w, h] = [257, 193];
    const p = rampPlane(w, h, 5);
    let piece: ArenaPassArgs | undefined;
    const keep: ArenaRunner = (a) => {
      if (a.op === 'aside') piece = a;
      return () => (a.op === 'aside' ? -1 : runArenaPass(a));
    };
    withArenaHelper(keep, () => {
      // A coarse step: few non-zeros, so the kernel's list fits below the coder's map.
      const { a, c } = codedAt(p, w, h, 40);
      const args = piece as ArenaPassArgs;
      expect(args).toBeDefined();
      const nb = a.bands.length;
      // The band tables the piece reads are still this encode's (nothing ran on the arena since).
      const stop = new Int32Array(new SharedArrayBuffer(4));
      const sums = new Float64Array(nb + 1);
      expect(runArenaPass({ ...args, stop: Int32Array.of(1), sums })).toBe(-1);
      expect(sums.every((s) => s === 0)).toBe(true);
      const count = nonZeros(c.q).at.length;
      const short = { at: new Int32Array(count - 1), v: new Int32Array(count - 1) };
      // Too many for the list (the pass over the flags stops): none listed, the sums made.
      // (a: x, q, width, nb, flags, n, room, narrow: the room replaced, q's width kept.)
      const withRoom = (room: number) => [...args.a.slice(0, 6), room, args.a[7]];
      expect(args.a[7]).toBe(1);
      expect(runArenaPass({ ...args, a: withRoom(0), stop, sums, ...short })).toBe(-1);
      expect(sums[nb]).toBe(1);
      // The whole list, by the kernel below the coder's map and by the pass over the chunk flags: the same.
      expect(args.a[6]).toBeGreaterThan(0);
      const listed = nonZeros(c.q);
      for (const room of [args.a[6], 0]) {
        const whole = { at: new Int32Array(count), v: new Int32Array(count) };
        const sums2 = new Float64Array(nb + 1);
        expect(runArenaPass({ ...args, a: withRoom(room), stop, sums: sums2, ...whole })).toBe(count);
        expect({ at: Array.from(whole.at), v: Array.from(whole.v) }).toEqual(listed);
        expect(Array.from(sums2)).toEqual(Array.from(sums));
      }
      expect(
        Object.is(
          codedSquaredError(a, c),
          a.bands.reduce((e, b, bi) => e + b.gain * sums[bi], 0),
        ),
      ).toBe(true);
    });
  });

  it('a q with more non-zeros than fit in half its size gets the error beside it, not a list', () => {
    const [w, h] = [101, 77];
    const p = rampPlane(w, h, 9);
    withArenaHelper(atOnce, () => {
      const { a, c } = codedAt(p, w, h, 0.05);
      expect(8 * c.nonZero).toBeGreaterThan(4 * w * h);
      expect(errorsBeside(c)).toBeDefined();
      expect(listedBeside(c)).toBeUndefined();
      expect(keepNonZeros(c)?.at?.length).toBe(nonZeros(c.q).at.length);
      expect(codedSquaredError(a, c)).toBeGreaterThan(0);
    });
  });

  it('on a real side thread the bytes, error and non-zeros are the reference’s', () => {
    const [w, h] = [401, 389];
    const p = rampPlane(w, h, 11);
    const ref = referenceFigures(p, w, h);
    for (let k = 0; k < 3; k++) {
      const got = withArenaHelper(offeredWithPause(side()), () => {
        const { a, c } = codedAt(p, w, h);
        return figures(a, c);
      });
      expectSame(got, ref);
    }
  });
});
