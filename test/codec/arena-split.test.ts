// A plane arena's load and 9/7 transforms split across two threads (src-main/engine/codec/arena-split.ts): the
// coefficients and the rebuilt plane equal the single-thread kernels' and the TypeScript reference's bit for
// bit, on odd sizes and 1–6 levels, whichever thread computes which piece: all pieces computed as they are
// offered, all taken back by the caller (a side thread that never started them), and a real worker thread.
import { describe, expect, it } from 'vitest';
import {
  type ArenaRunner,
  loadSplit,
  offerTouch,
  runArenaPass,
  settleTouch,
  transformSplit,
  withArenaHelper,
} from '../../src-main/engine/codec/arena-split';
import { PlaneArena } from '../../src-main/engine/codec/wasm/arena';
import { isSharedMemory } from '../../src-main/engine/codec/wasm/shared-memory';
import { forwardWavelet, inverseWavelet, LIFTING } from '../../src-main/engine/codec/wavelet-transform';
import { arenasAtEverySize, offeredWithPause, realSideThread } from '../helpers/side-thread';
import { digest, rampPlane, reference } from './plane-samples';

/** Every piece computed at once, on this thread, as it is offered. */
const atOnce: ArenaRunner = (a) => {
  runArenaPass(a);
  return () => null;
};
/** Every piece left unstarted and taken back by the caller when it joins (an absent or busy worker). */
let withdrawn = 0;
const takenBack: ArenaRunner = (a) => () => {
  withdrawn++;
  return runArenaPass(a);
};

/** The plane's samples on shared memory (as the decoder gives them), so the load is split too. */
function sharedPlane(w: number, h: number, seed: number): Float32Array {
  const p = rampPlane(w, h, seed);
  const s = new Float32Array(new SharedArrayBuffer(4 * p.length));
  s.set(p);
  return s;
}

/** Forward transform in a fresh arena, then its inverse in the arena's work region: both digests. */
function arenaRun(p: Float32Array, w: number, h: number, levels: number, run: ArenaRunner | undefined) {
  return withArenaHelper(run, () => {
    const arena = PlaneArena.create(w, h);
    if (!arena) throw new Error('no arena');
    expect(isSharedMemory(arena.memory)).toBe(true);
    loadSplit(arena, p);
    transformSplit(arena, levels, LIFTING, false);
    const fwd = digest(arena.coeffs());
    const work = new Float64Array(arena.memory.buffer, arena.workAt, arena.n);
    work.set(arena.coeffs());
    transformSplit(arena, levels, LIFTING, true, arena.workAt);
    const inv = digest(new Float64Array(arena.memory.buffer, arena.workAt, arena.n));
    arena.release();
    return [fwd, inv];
  });
}

/** The TypeScript reference's forward transform and its inverse. */
function referenceRun(p: Float32Array, w: number, h: number, levels: number) {
  return reference(() => {
    const x = Float64Array.from(p);
    forwardWavelet(x, w, h, levels);
    const fwd = digest(x);
    inverseWavelet(x, w, h, levels);
    return [fwd, digest(x)];
  });
}

const CASES: Array<[number, number, number]> = [
  [37, 29, 1],
  [101, 77, 2],
  [67, 131, 3],
  [129, 65, 4],
  [257, 193, 5],
  [321, 259, 6],
];

describe('plane arena passes on two threads', () => {
  arenasAtEverySize();

  it.each(CASES)('%i×%i, %i levels: the same bits on one thread, split, and taken back', (w, h, levels) => {
    const p = sharedPlane(w, h, w + 7 * h);
    const ref = referenceRun(p, w, h, levels);
    expect(arenaRun(p, w, h, levels, undefined)).toEqual(ref);
    expect(arenaRun(p, w, h, levels, atOnce)).toEqual(ref);
    const before = withdrawn;
    expect(arenaRun(p, w, h, levels, takenBack)).toEqual(ref);
    // Three pieces per pass offered: the load, and per level a row and a column pass, each way.
    expect(withdrawn - before).toBe(3 * (1 + 4 * levels));
  });

  it('a plane on unshared memory is loaded on the calling thread, with the same bits', () => {
    const p = rampPlane(129, 65, 3);
    expect(arenaRun(p, 129, 65, 3, takenBack)).toEqual(referenceRun(p, 129, 65, 3));
  });
});

describe('plane arena passes on a real second thread', () => {
  const sideThread = realSideThread();

  it('computes pieces in the shared memory, with the same bits', () => {
    const thread = sideThread();
    const offered = offeredWithPause(thread);
    for (const [w, h, levels] of [CASES[2], CASES[5]]) {
      const p = sharedPlane(w, h, 11 * w + h);
      expect(arenaRun(p, w, h, levels, offered)).toEqual(referenceRun(p, w, h, levels));
    }
    expect(thread.taken).toBeGreaterThan(0);
  });

  it('touches the work region ahead on the worker without changing a value', () => {
    const thread = sideThread();
    const arena = withArenaHelper(undefined, () => PlaneArena.create(301, 263));
    if (!arena) throw new Error('no arena');
    const work = new Int32Array(arena.memory.buffer, arena.workAt, (arena.endAt - arena.workAt) >> 2);
    for (let i = 0; i < work.length; i += 97) work[i] = i ^ 0x5a5a;
    const before = digest(work);
    const taken = thread.taken;
    withArenaHelper(
      (a) => thread.run('arena-pass', a),
      () => offerTouch(arena),
    );
    // Give the worker time to start it; whether it finished or was stopped, the values stay.
    Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, 1000);
    settleTouch(arena);
    expect(digest(work)).toBe(before);
    expect(thread.taken).toBe(taken + 1);
    arena.release();
  });
});
