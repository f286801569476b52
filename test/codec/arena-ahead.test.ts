// Plane arenas' memories made ahead (src-main/engine/codec/wasm/arena.ts prepareArenas; the CLI makes them
// from the probe's size, src-main/node/services/arenas-ahead.ts): they go, in order, to the next arenas of their
// size only, whose loads and transforms give the same bits as fresh memory; the touch started on them is ended
// once, after the last one's load, or when they are dropped; and the touch itself (from the last page down, on
// the side thread) changes no value and stops when asked.
import { describe, expect, it } from 'vitest';
import {
  loadSplit,
  runArenaPass,
  transformSplit,
  withArenaHelper,
} from '../../src-main/engine/codec/arena-split';
import { dropPreparedArenas, PlaneArena, prepareArenas } from '../../src-main/engine/codec/wasm/arena';
import { forwardWavelet, LIFTING } from '../../src-main/engine/codec/wavelet-transform';
import { arenasAtEverySize, realSideThread } from '../helpers/side-thread';
import { digest, rampPlane, reference } from './plane-samples';

type Region = { memory: WebAssembly.Memory; from: number; to: number };

/** Prepare `count` memories for w×h planes with a touch that only records its regions and counts its ends. */
function prepared(w: number, h: number, count: number) {
  const seen: { regions: Region[]; ends: number } = { regions: [], ends: 0 };
  const made = prepareArenas(w, h, count, (regions) => {
    seen.regions = regions;
    return () => {
      seen.ends++;
    };
  });
  expect(made).toBe(true);
  return seen;
}

/** The plane's samples on shared memory (as the decoder gives them). */
function sharedPlane(w: number, h: number, seed: number): Float32Array {
  const s = new Float32Array(new SharedArrayBuffer(4 * w * h));
  s.set(rampPlane(w, h, seed));
  return s;
}

describe('plane arena memories made ahead', () => {
  arenasAtEverySize();

  it('go in order to the next arenas of their size only, end the touch after the last load, same bits', () => {
    const [w, h, levels] = [67, 131, 3];
    const seen = prepared(w, h, 2);
    expect(seen.regions).toHaveLength(2);
    const other = PlaneArena.create(w + 1, h);
    if (!other) throw new Error('no arena');
    expect(seen.regions.some((r) => r.memory === other.memory)).toBe(false);
    const p = sharedPlane(w, h, 5);
    const ref = reference(() => {
      const x = Float64Array.from(p);
      forwardWavelet(x, w, h, levels);
      return digest(x);
    });
    const arenas: PlaneArena[] = [];
    for (let k = 0; k < 2; k++) {
      const arena = PlaneArena.create(w, h);
      if (!arena) throw new Error('no arena');
      arenas.push(arena);
      // The region handed to the touch is exactly the coefficients, which the load overwrites in full.
      expect(arena.memory).toBe(seen.regions[k].memory);
      expect([seen.regions[k].from, seen.regions[k].to]).toEqual([
        arena.coeffsAt,
        arena.coeffsAt + 8 * w * h,
      ]);
      withArenaHelper(undefined, () => {
        loadSplit(arena, p);
        transformSplit(arena, levels, LIFTING, false);
      });
      expect(seen.ends).toBe(k === 1 ? 1 : 0);
      expect(digest(arena.coeffs())).toBe(ref);
    }
    // None left: the next arena of that size gets fresh memory, and dropping now ends nothing again.
    const third = PlaneArena.create(w, h);
    expect(third?.memory).not.toBe(arenas[1].memory);
    dropPreparedArenas();
    expect(seen.ends).toBe(1);
    for (const a of [other, ...arenas]) a.release();
    third?.release();
  });

  it('dropped before any arena took them: their touch is ended once and no arena gets them', () => {
    const seen = prepared(101, 77, 1);
    dropPreparedArenas();
    expect(seen.ends).toBe(1);
    const arena = PlaneArena.create(101, 77);
    expect(arena?.memory).not.toBe(seen.regions[0].memory);
    arena?.release();
    dropPreparedArenas();
    expect(seen.ends).toBe(1);
  });

  it('made again: the earlier ones are dropped (their touch ended) and the new ones taken', () => {
    const first = prepared(37, 29, 1);
    const second = prepared(37, 29, 1);
    expect(first.ends).toBe(1);
    const arena = PlaneArena.create(37, 29);
    expect(arena?.memory).toBe(second.regions[0].memory);
    arena?.release();
    dropPreparedArenas();
  });

  it('a touch taken back on this thread after its stop word is set touches nothing and returns at once', () => {
    const memory = new WebAssembly.Memory({ initial: 4, maximum: 65536, shared: true });
    const stop = new Int32Array(new SharedArrayBuffer(4));
    Atomics.store(stop, 0, 1);
    const a = [65536, 4 * 65536, 1];
    // Stopped before its first page: where it stopped is the last page (it goes down from there).
    const at = runArenaPass({ memory, id: 0, op: 'touch', inverse: false, a, scratch: [], stop });
    expect(at).toBe(4 * 65536 - 4096);
  });
});

describe('a touch from the last page down on the side thread', () => {
  const sideThread = realSideThread();

  it('changes no value, ends at the range start, and stops when asked', () => {
    const thread = sideThread();
    const memory = new WebAssembly.Memory({ initial: 40, maximum: 65536, shared: true });
    const words = new Int32Array(memory.buffer);
    for (let i = 0; i < words.length; i += 61) words[i] = (i * 2654435761) | 0;
    const before = digest(words);
    const [from, to] = [65536 + 8, 40 * 65536 - 24];
    const args = { memory, id: 0, op: 'touch' as const, inverse: false, a: [from, to, 1], scratch: [] };
    const done = thread.run('arena-pass', { ...args, stop: new Int32Array(new SharedArrayBuffer(4)) });
    expect(done()).toBe(from);
    const stop = new Int32Array(new SharedArrayBuffer(4));
    Atomics.store(stop, 0, 1);
    const stopped = thread.run('arena-pass', { ...args, stop });
    expect(stopped()).toBeGreaterThan(from);
    expect(digest(words)).toBe(before);
  });

  it('runs what was set with beforeNextJob once, before the next job only', () => {
    const thread = sideThread();
    const calls: string[] = [];
    const job = () =>
      thread.run('arena-pass', {
        memory: new WebAssembly.Memory({ initial: 2, maximum: 65536, shared: true }),
        id: 0,
        op: 'touch',
        inverse: false,
        a: [65536, 2 * 65536],
        scratch: [],
        stop: new Int32Array(new SharedArrayBuffer(4)),
      });
    thread.beforeNextJob(() => calls.push('before'));
    const first = job();
    calls.push('posted');
    first();
    job()();
    expect(calls).toEqual(['before', 'posted']);
  });
});
