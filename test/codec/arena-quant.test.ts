// A plane arena's quantiser (with coder 2's bin statistics), squared error and dequantisation split across two
// threads (src-main/engine/codec/arena-quant.ts): q, the non-zero count, the reconstruction offsets, the coded
// bytes, the squared error and the rebuilt plane equal the TypeScript reference's bit for bit, on odd sizes and
// 0–6 levels, whichever thread computes which piece: on one thread, every piece computed as it is offered, every
// piece taken back by the caller (a side thread that never started them), and a real worker thread; a decided
// plane's rebuild over its coefficients (one split pass instead of the phases over q); and the squared error at a
// step without writing q (squaredErrorAt) equals that of the quantised plane, bit for bit. q is i16 where every
// |q| fits, else (a plane whose |q| passes 32767) i32, with the same bits. (The squared error and
// non-zeros worked out beside an encode: test/codec/coded-aside.test.ts.)
import { describe, expect, it } from 'vitest';
import { bandCuts } from '../../src-main/engine/codec/arena-quant';
import {
  type ArenaPassArgs,
  type ArenaRunner,
  runArenaPass,
  withArenaHelper,
} from '../../src-main/engine/codec/arena-split';
import { bandTable } from '../../src-main/engine/codec/coeff-coder';
import { quantiseResident, residentArena } from '../../src-main/engine/codec/resident-plane';
import { PlaneArena } from '../../src-main/engine/codec/wasm/arena';
import { GEO, PAR, RESULTS } from '../../src-main/engine/codec/wasm/runtime';
import {
  analysePlane,
  codeAnalysed,
  codedSquaredError,
  quantiseAnalysed,
  reconstructCoded,
  squaredErrorAt,
} from '../../src-main/engine/codec/wavelet-plane';
import { bandsFor, LIFTING } from '../../src-main/engine/codec/wavelet-transform';
import { arenasAtEverySize, offeredWithPause, realSideThread } from '../helpers/side-thread';
import { digest, rampPlane, reference } from './plane-samples';

/** Pieces computed by each runner, by operation. */
const counts = new Map<string, number>();
const count = (how: string, a: ArenaPassArgs) => {
  const key = `${how} ${a.op}`;
  counts.set(key, (counts.get(key) ?? 0) + 1);
};
/** Every piece computed at once, on this thread, as it is offered. */
const atOnce: ArenaRunner = (a) => {
  count('offered', a);
  const r = runArenaPass(a);
  return () => r;
};
/** Every piece left unstarted and taken back by the caller when it joins (an absent or busy worker). */
const takenBack: ArenaRunner = (a) => () => {
  count('taken back', a);
  return runArenaPass(a);
};

/** Width, height (levels from levelsFor: 0, 2, 3, 3, 5 and 6). */
const SIZES: Array<[number, number]> = [
  [13, 11],
  [37, 29],
  [101, 77],
  [67, 131],
  [257, 193],
  [401, 389],
];
const STEP = 2.5;
/** Steps of squaredErrorAt (quantiser statistics and error without q). */
const SSE_STEPS = [0.7 * STEP, 2 * STEP, 9 * STEP];

/**
 * Everything the split operations feed, as digests: q, counts, offsets, bytes, error, rebuilt plane; and
 * whether the plane had an arena.
 */
function coded(p: Float32Array, w: number, h: number, step = STEP) {
  const a = analysePlane(p, w, h);
  const resident = residentArena(a) !== undefined;
  const c = codeAnalysed(a, step, 2);
  const narrow = residentArena(a)?.narrowQ;
  const out = {
    // The error at other steps without writing q (first: q must still be c's afterwards).
    sseAt: SSE_STEPS.map((s) => squaredErrorAt(a, s)),
    q: digest(c.q),
    nonZero: c.nonZero,
    bytes: digest(c.bytes),
    offsets: Array.from(c.offsets ?? []),
    sse: codedSquaredError(a, c),
    rebuilt: digest(reconstructCoded(a, c)),
    // The statistics without range coding (rate control), at a second step.
    offsets2: Array.from(quantiseAnalysed(a, 2 * step).offsets ?? []),
  };
  return { out, resident, narrow };
}

/**
 * Phases of a dequantisation of n positions split down to single positions (arena-quant.ts), over an i16 q
 * (the work region's top quarter) or an i32 q (its upper half).
 */
function phases(n: number, narrow: boolean): number {
  const s = narrow ? 2 : 4;
  let k = 0;
  for (let from = 0; n - from >= 8; k++) from = Math.floor(((8 - s) * n + s * from) / 8);
  return k;
}

describe('quantiser, squared error and dequantisation split across threads', () => {
  arenasAtEverySize();

  it.each(SIZES)('%i×%i: the same bits on one thread, split, and taken back', (w, h) => {
    const p = rampPlane(w, h, 3 * w + h);
    const ref = reference(() => coded(p, w, h));
    expect(ref.out.nonZero).toBeGreaterThan(0);
    expect(ref.resident).toBe(false);
    for (const run of [undefined, atOnce, takenBack]) {
      counts.clear();
      const got = withArenaHelper(run, () => coded(p, w, h));
      expect(got.resident).toBe(true);
      expect(got.narrow).toBe(true);
      expect(got.out).toEqual(ref.out);
      if (!run) continue;
      const how = run === atOnce ? 'offered' : 'taken back';
      // Three pieces per split pass: two quantisations, one squared error, and each dequantisation phase. The
      // encode's piece beside it (coded-aside.ts) gives the squared error when computed as offered (no 'errors'
      // pass then); taken back after the encode, it does nothing and the error is split as before.
      expect(counts.get(`${how} quantise`)).toBe(6);
      expect(counts.get(`${how} aside`)).toBe(1);
      expect(counts.get(`${how} errors`)).toBe(run === atOnce ? undefined : 3);
      expect(counts.get(`${how} dequantise`)).toBe(3 * phases(w * h, true));
      // Per squaredErrorAt, three pieces of each of its two passes.
      expect(counts.get(`${how} statsAt`)).toBe(3 * SSE_STEPS.length);
      expect(counts.get(`${how} errorsAt`)).toBe(3 * SSE_STEPS.length);
    }
  });

  it('squaredErrorAt is the error of the quantised plane, bit for bit, and leaves q as it was', () => {
    const [w, h] = [257, 193];
    const p = rampPlane(w, h, 11);
    for (const run of [undefined, atOnce, takenBack]) {
      withArenaHelper(run, () => {
        const a = analysePlane(p, w, h);
        expect(residentArena(a)).toBeDefined();
        const c = quantiseAnalysed(a, STEP);
        const q = digest(c.q);
        for (const s of SSE_STEPS) {
          const at = squaredErrorAt(a, s);
          expect(at).toBeGreaterThan(0);
          expect(Object.is(at, codedSquaredError(a, quantiseAnalysed(a, s)))).toBe(true);
        }
        // Quantised again at STEP after the others: the error without q is still the coded plane's.
        const again = quantiseAnalysed(a, STEP);
        expect(squaredErrorAt(a, STEP)).toBe(codedSquaredError(a, again));
        expect(digest(again.q)).toBe(q);
        expect(() => squaredErrorAt(a, 0)).toThrow(RangeError);
      });
    }
  });

  it.each([SIZES[3], SIZES[5]])(
    '%i×%i: a decided plane rebuilt over its coefficients, in one split pass, has the same bits',
    (w, h) => {
      const p = rampPlane(w, h, 5 * w + h);
      const ref = reference(() => coded(p, w, h).out.rebuilt);
      for (const run of [undefined, atOnce, takenBack]) {
        counts.clear();
        const got = withArenaHelper(run, () => {
          const a = analysePlane(p, w, h, true);
          const arena = residentArena(a) as PlaneArena;
          const c = codeAnalysed(a, STEP, 2);
          // Its first touch starts at the coder's map, right below q: the rest of the lower half is left out.
          const map = arena.coderLayout(bandTable(a.bands)).mag;
          let started = 0;
          arena.spend(() => started++);
          counts.clear();
          const x = reconstructCoded(a, c);
          return { rebuilt: digest(x), started, map, arena };
        });
        expect(got.rebuilt).toEqual(ref);
        expect(got.arena.touchFrom).toBe(got.map);
        expect(got.map).toBeGreaterThan(got.arena.workAt + 2 * w * h);
        expect(got.map + w * h).toBeLessThanOrEqual(got.arena.qAt);
        // What spend deferred ran once, when the rebuild had read q.
        expect(got.started).toBe(1);
        if (!run) continue;
        const how = run === atOnce ? 'offered' : 'taken back';
        expect(counts.get(`${how} dequantise`)).toBe(3);
      }
    },
  );

  it.each([SIZES[2], SIZES[5]])(
    '%i×%i: a plane whose |q| passes 32767 is quantised into an i32 q, with the same bits',
    (w, h) => {
      // Grey levels × 400 at a step of 0.05: LL magnitudes far past an i16's.
      const p = rampPlane(w, h, 9 * w + h).map((v) => 400 * v);
      const step = 0.05;
      const ref = reference(() => coded(p, w, h, step));
      for (const run of [undefined, atOnce, takenBack]) {
        counts.clear();
        const got = withArenaHelper(run, () => coded(p, w, h, step));
        expect(got.resident).toBe(true);
        expect(got.narrow).toBe(false);
        expect(got.out).toEqual(ref.out);
        if (!run) continue;
        const how = run === atOnce ? 'offered' : 'taken back';
        expect(counts.get(`${how} dequantise`)).toBe(3 * phases(w * h, false));
      }
    },
  );

  it('cuts the bands into runs of about a quarter of the plane: the finest level’s three and the rest', () => {
    const bands = bandsFor(3300, 2500, 6);
    expect(bandCuts(bands)).toEqual([0, 16, 17, 18, 19]);
    expect(bandCuts(bandsFor(13, 11, 0))).toEqual([0, 1, 1, 1, 1]);
  });

  it('the bin statistics made with the quantiser equal the separate statistics kernel’s', () => {
    const [w, h] = [257, 193];
    const bands = bandsFor(w, h, 5);
    const steps = bands.map((b) => STEP * (b.orient === 0 ? 0.25 : 1 / b.level));
    for (const run of [undefined, atOnce, takenBack]) {
      const stats = withArenaHelper(run, () => {
        const arena = PlaneArena.create(w, h);
        if (!arena) throw new Error('no arena');
        arena.load(rampPlane(w, h, 5));
        arena.transform(5, LIFTING, false);
        quantiseResident(arena, bands, (bi) => [steps[bi], 0.375, 0]);
        const fused = new Float64Array(arena.memory.buffer, RESULTS, 4 * bands.length).slice();
        expect(arena.narrowQ).toBe(true);
        arena.lift.binStats16(arena.coeffsAt, arena.qAt, w, bands.length, GEO, PAR, RESULTS);
        const separate = new Float64Array(arena.memory.buffer, RESULTS, 4 * bands.length).slice();
        arena.release();
        return { fused, separate };
      });
      expect(stats.fused.some((v) => v !== 0)).toBe(true);
      expect(Array.from(stats.fused)).toEqual(Array.from(stats.separate));
    }
  });
});

describe('quantiser, squared error and dequantisation on a real second thread', () => {
  const sideThread = realSideThread();

  it('computes pieces in the shared memory, with the same bits', () => {
    const thread = sideThread();
    const offered = offeredWithPause(thread, (a) => a.op !== 'load' && a.op !== 'rows' && a.op !== 'cols');
    const taken = thread.taken;
    for (const [w, h] of [SIZES[3], SIZES[5]]) {
      const p = rampPlane(w, h, 7 * w + h);
      const ref = reference(() => coded(p, w, h).out);
      expect(withArenaHelper(offered, () => coded(p, w, h).out)).toEqual(ref);
    }
    expect(thread.taken).toBeGreaterThan(taken);
  });
});
