/**
 * A plane arena's (./wasm/arena.ts) load and 9/7 transforms on two threads at once: the arena's memory is a
 * shared WebAssembly memory, which the scan encoder's side thread instantiates the same kernels on. Each pass
 * (the widening load, and per level the row pass and the column pass; the quantiser, squared error and
 * dequantisation of ./arena-quant.ts) is cut into {@link PIECES} disjoint pieces: rows (in the row pairs of the
 * whole pass), column strips (the kernels' STRIP) or groups of whole bands. Pieces 1 … PIECES − 1
 * are offered to the other thread in order; this thread computes piece 0, then takes the offered pieces back
 * from the last one down, computing each the other thread has not started, and waits for the rest before the
 * next pass (the claim protocol of src-main/node/parallel/side-thread.ts). Every sample gets the operations of
 * the single-thread kernels in the same order, so the coefficients are the same bit for bit however the pieces
 * fell, and an absent or busy side thread only means this thread computes everything.
 *
 * Each thread has its own transform scratch in the arena (tmpAt/bufAt here, sideTmpAt/sideBufAt there): a
 * piece finds out where it runs from the memory object it is given (the arena's own on this thread; a copy of
 * it, made by the message, on the other).
 */

import { type ExactF32Samples, isExactF32Samples } from '../../contract';
import { asidePiece } from './aside-piece';
import type { PlaneArena } from './wasm/arena';
import { COEF, GEO, type LiftingExports, liftingOn, PAR, RESULTS } from './wasm/runtime';
import { arenaMemoryId, isSharedMemory, ownKernels } from './wasm/shared-memory';
import { widenStaged } from './wasm/widen-staged';

/** One piece of a pass, as sent to the other thread. */
export interface ArenaPassArgs {
  /** The arena's memory (shared) and a number naming it across threads. */
  memory: WebAssembly.Memory;
  id: number;
  op:
    | 'load'
    | 'rows'
    | 'cols'
    | 'touch'
    | 'quantise'
    | 'errors'
    | 'dequantise'
    | 'statsAt'
    | 'errorsAt'
    | 'aside';
  inverse: boolean;
  /**
   * load: dst (f64 bytes); rows: x, width, w, y0, y1; cols: x, width, w, h, c0, c1; touch: from, to (bytes),
   * and 1 to go from the last page down;
   * quantise: x, q, width, b0, b1 (bands), flags, narrow; errors: x, q, width, b0, b1, narrow; dequantise: q,
   * x, width, nb, i0, i1, narrow; statsAt and errorsAt (the quantiser's statistics and error without q,
   * ./arena-quant.ts): x, width, b0, b1; aside (./coded-aside.ts): x, q, width, nb, flags, n, room (0: none),
   * narrow. narrow: 1 for an i16 q (./wasm/arena.ts), 0 for an i32 one.
   * The band tables (and the statistics written per band) are the kernels' (./wasm/runtime.ts GEO, PAR, RESULTS).
   */
  a: number[];
  /** Scratch: the arena's own thread's tmp and buf, the other thread's tmp and buf, then the end of both. */
  scratch: number[];
  /** load: the samples to widen (float or integer, on shared memory when sent to the other thread). */
  samples?: ExactF32Samples;
  /** touch: set to 1 (on a SharedArrayBuffer) when the pages are needed: the other thread stops there. */
  stop?: Int32Array;
  /** aside: where the per-band squared errors and q's non-zeros (positions, values) go (shared memory). */
  sums?: Float64Array;
  at?: Int32Array;
  v?: Int32Array;
}

/** Offers a piece to the other thread; the returned function computes it here or waits for it (its
 * {@link runArenaPass} value). Call it once. */
export type ArenaRunner = (args: ArenaPassArgs) => () => unknown;

/** Pieces per pass: enough for the two threads to meet wherever the other one got to. */
export const PIECES = 4;
/** Passes over fewer samples run on this thread alone (a message costs more than the work). */
export const SPLIT_MIN_SAMPLES = 1 << 16;
let splitMin = SPLIT_MIN_SAMPLES;

/** Set the smallest pass that is split (tests use 1 to split every level of small planes). */
export function setSplitMinSamples(n: number): void {
  splitMin = n;
}
/** The kernels' column strip width (./wasm/assembly/lifting.ts STRIP). */
const STRIP = 32;

let helper: ArenaRunner | undefined;

/** Run `fn` with `run` offering arena pieces to another thread (undefined: all on this thread). */
export function withArenaHelper<T>(run: ArenaRunner | undefined, fn: () => T): T {
  const before = helper;
  helper = run;
  try {
    return fn();
  } finally {
    helper = before;
  }
}

/** The other thread's instances on memories it was sent, by number, with the size they were made at. */
const remote = new Map<number, { lift: LiftingExports; bytes: number }>();

/** The kernels and scratch for a piece on this thread: the arena's own, or instances made on the copy sent here. */
function kernelsFor(args: ArenaPassArgs): { lift: LiftingExports; tmp: number; buf: number; end: number } {
  const [tmp0, buf0, tmp1, buf1, end] = args.scratch;
  const own = ownKernels(args.memory);
  if (own) return { lift: own, tmp: tmp0, buf: buf0, end: tmp1 };
  const bytes = args.memory.buffer.byteLength;
  let r = remote.get(args.id);
  if (!r || r.bytes !== bytes) {
    const lift = liftingOn(args.memory);
    if (!lift) throw new Error('the codec kernels are unavailable on the side thread');
    r = { lift, bytes };
    remote.delete(args.id);
    remote.set(args.id, r);
  }
  return { lift: r.lift, tmp: tmp1, buf: buf1, end };
}

/** Positions per call of the dequantisation kernel (any cut gives the same values: each x from its own q). */
const DEQUANTISE_SLICE = 1 << 16;

/** Pages touched between two looks at the stop word. */
const TOUCH_BATCH = 64;
/** Int32 words per 4 KiB page (the smallest page size of the systems this runs on). */
const PAGE_WORDS = 1024;

/**
 * One write per page of the bytes from `from` below `to` that changes no value (an atomic add of 0, which no
 * write of the other thread can interleave with), so those pages are faulted in on this thread; until `stop`.
 * Returns where it stopped (`to` when done). `down`: from the last page down instead (returns `from` when done),
 * towards a thread that writes the range from its start.
 */
function touchPages(
  memory: WebAssembly.Memory,
  from: number,
  to: number,
  stop: Int32Array | undefined,
  down = false,
): number {
  const v = new Int32Array(memory.buffer);
  const first = from >> 2;
  const pages = Math.ceil(((to >> 2) - first) / PAGE_WORDS);
  for (let k = 0; k < pages; k++) {
    const i = first + (down ? pages - 1 - k : k) * PAGE_WORDS;
    if (k % TOUCH_BATCH === 0 && stop && Atomics.load(stop, 0) !== 0) return i << 2;
    Atomics.add(v, i, 0);
  }
  return down ? from : to;
}

/**
 * Compute one piece (the side thread's job, and this thread's share): a quantise piece's count of non-zeros, a
 * touch's end (the byte it stopped at), else 0.
 */
export function runArenaPass(args: ArenaPassArgs): number {
  const a = args.a;
  // Pages are worth touching ahead only on another thread: taken back here, they are touched when used.
  if (args.op === 'touch')
    return ownKernels(args.memory) ? a[0] : touchPages(args.memory, a[0], a[1], args.stop, a[2] === 1);
  const { lift, tmp, buf, end } = kernelsFor(args);
  switch (args.op) {
    case 'load':
      if (args.samples) widenStaged(args.memory, lift, a[0], args.samples, tmp, end - tmp);
      break;
    case 'rows':
      (args.inverse ? lift.inverseRows : lift.forwardRows)(a[0], a[1], a[2], a[3], a[4], tmp, COEF);
      break;
    case 'cols':
      (args.inverse ? lift.inverseCols : lift.forwardCols)(a[0], a[1], a[2], a[3], a[4], a[5], buf, COEF);
      break;
    case 'quantise':
      return (a[6] ? lift.quantiseStats16 : lift.quantiseStats)(
        a[0],
        a[1],
        a[2],
        a[3],
        a[4],
        GEO,
        PAR,
        a[5],
        RESULTS,
      );
    case 'errors': {
      const b0 = a[3];
      (a[5] ? lift.squaredError16 : lift.squaredError)(
        a[0],
        a[1],
        a[2],
        a[4] - b0,
        GEO + 16 * b0,
        PAR + 32 * b0,
        RESULTS + 8 * b0,
      );
      break;
    }
    case 'dequantise':
      // In slices: a call runs to its end in the code it started in, and the report's rebuild is often this
      // kernel's first use, so one call per piece would run wholly in the engine's first, unoptimised code.
      for (let i = a[4]; i < a[5]; i += DEQUANTISE_SLICE)
        (a[6] ? lift.dequantiseInPlace16 : lift.dequantiseInPlace)(
          a[0],
          a[1],
          a[2],
          a[3],
          GEO,
          PAR,
          i,
          Math.min(a[5], i + DEQUANTISE_SLICE),
        );
      break;
    case 'statsAt':
      lift.quantiseStats(a[0], 0, a[1], a[2], a[3], GEO, PAR, 0, RESULTS);
      break;
    case 'errorsAt':
      lift.errorsAt(a[0], a[1], a[2], a[3], GEO, PAR, RESULTS);
      break;
    case 'aside':
      return asidePiece(args, lift);
  }
  return 0;
}

/**
 * Offer the other thread one piece alone, with no share computed here (./coded-aside.ts): its join, which
 * computes it here when the other thread has not started it; undefined without a helper or a split arena.
 */
export function offerAlone(
  arena: PlaneArena,
  op: ArenaPassArgs['op'],
  a: number[],
  extra: Pick<ArenaPassArgs, 'stop' | 'sums' | 'at' | 'v'>,
): (() => number) | undefined {
  const run = helper;
  if (!run || !splits(arena, arena.n)) return undefined;
  const join = run({
    memory: arena.memory,
    id: arenaMemoryId(arena.memory),
    op,
    inverse: false,
    a,
    scratch: [],
    ...extra,
  });
  return () => join() as number;
}

/**
 * One pass in PIECES pieces, `piece(k)` giving piece k's arguments (k = −1: the whole pass); all of it here
 * without a helper or when `split` is false. Returns the sum of the pieces' values (integers: any order).
 */
export function pass(
  arena: PlaneArena,
  op: ArenaPassArgs['op'],
  inverse: boolean,
  split: boolean,
  piece: (k: number) => ArenaPiece,
): number {
  const base = {
    memory: arena.memory,
    id: arenaMemoryId(arena.memory),
    op,
    inverse,
    scratch: [arena.tmpAt, arena.bufAt, arena.sideTmpAt, arena.sideBufAt, arena.flagsAt],
  };
  const run = helper;
  if (!run || !split) return runArenaPass({ ...base, ...piece(-1) });
  const joins: Array<() => unknown> = [];
  for (let k = 1; k < PIECES; k++) joins.push(run({ ...base, ...piece(k) }));
  let sum = runArenaPass({ ...base, ...piece(0) });
  for (let k = joins.length - 1; k >= 0; k--) sum += joins[k]() as number;
  return sum;
}

/** A piece's kernel arguments (and samples for a load); k = −1: the whole pass. */
interface ArenaPiece {
  a: number[];
  samples?: ExactF32Samples;
}

/** Whether passes over `samples` values are split: a helper is set, the memory is shared and the pass large. */
export function splits(arena: PlaneArena, samples: number): boolean {
  return !!helper && samples >= splitMin && isSharedMemory(arena.memory) && arenaMemoryId(arena.memory) > 0;
}

/** Piece k of [0, n) cut in PIECES, its bounds rounded down to multiples of `unit` (the last ends at n). */
export function bounds(k: number, n: number, unit: number): [number, number] {
  if (k < 0) return [0, n];
  const units = Math.ceil(n / unit);
  const at = (j: number) => (j >= PIECES ? n : Math.min(n, unit * Math.floor((j * units) / PIECES)));
  return [at(k), at(k + 1)];
}

/**
 * Copy `plane`'s samples into the arena as f64 (./wasm/arena.ts load): float or integer samples (a decoder's
 * 8-bit or 16-bit ones) on shared memory are copied and widened piece by piece on both threads; anything else
 * through the arena's own load.
 */
export function loadSplit(arena: PlaneArena, plane: ArrayLike<number>): void {
  const n = arena.n;
  if (!(isExactF32Samples(plane) && plane.buffer instanceof SharedArrayBuffer) || !splits(arena, n))
    arena.load(plane);
  else {
    arena.coeffs();
    pass(arena, 'load', false, true, (k) => {
      const [from, to] = bounds(k, n, 4);
      return {
        a: [arena.coeffsAt + 8 * from, arena.qAt + 4 * from, to - from],
        samples: plane.subarray(from, to),
      };
    });
  }
  arena.loaded();
}

/**
 * The arena's forward or inverse transform (./wasm/arena.ts transform) of the plane at `at`, each level's row
 * and column passes split across the two threads where {@link splits} allows.
 */
export function transformSplit(
  arena: PlaneArena,
  levels: number,
  coefficients: readonly number[],
  inverse: boolean,
  at = arena.coeffsAt,
): void {
  if (!splits(arena, arena.n)) {
    arena.transform(levels, coefficients, inverse, at);
    return;
  }
  new Float64Array(arena.coeffs().buffer, COEF, coefficients.length).set(coefficients);
  const { width, height } = arena;
  const dims: Array<[number, number]> = [];
  for (let l = 0, w = width, h = height; l < levels; l++, w = (w + 1) >> 1, h = (h + 1) >> 1)
    dims.push([w, h]);
  const order = inverse ? dims.map((_, l) => levels - 1 - l) : dims.map((_, l) => l);
  for (const l of order) {
    const [w, h] = dims[l];
    const split = w * h >= splitMin;
    const rows = () =>
      pass(arena, 'rows', inverse, split, (k) => ({ a: [at, width, w, ...bounds(k, h, 2)] }));
    const cols = () =>
      pass(arena, 'cols', inverse, split, (k) => ({ a: [at, width, w, h, ...bounds(k, w, STRIP)] }));
    if (inverse) {
      cols();
      rows();
    } else {
      rows();
      cols();
    }
  }
}

/** Each arena's pending touch of its work region: the stop word and the join. */
const touching = new WeakMap<PlaneArena, { stop: Int32Array; join: () => unknown }>();
/** Where a paused touch of each arena's work region stopped ({@link whileTouchPaused}). */
const touchedTo = new WeakMap<PlaneArena, number>();

/**
 * Offer the other thread the first touch of the arena's work region from its touchFrom (q and the coder's map,
 * then the reconstruction over it; fresh pages cost more than the arithmetic on them), while this thread
 * quantises and codes. The values are not
 * changed, so this thread may write the region meanwhile. {@link settleTouch} ends it.
 */
export function offerTouch(arena: PlaneArena): void {
  const run = helper;
  if (!run || !splits(arena, arena.n) || touching.has(arena)) return;
  const from = touchedTo.get(arena) ?? arena.touchFrom;
  if (from >= arena.endAt) return;
  const stop = new Int32Array(new SharedArrayBuffer(4));
  const args: ArenaPassArgs = {
    memory: arena.memory,
    id: arenaMemoryId(arena.memory),
    op: 'touch',
    inverse: false,
    a: [from, arena.endAt],
    scratch: [],
    stop,
  };
  touching.set(arena, { stop, join: run(args) });
}

/** The arena's work region is needed now (or never): stop the touch where it got to and collect its answer. */
export function settleTouch(arena: PlaneArena): void {
  const t = touching.get(arena);
  if (!t) return;
  touching.delete(arena);
  Atomics.store(t.stop, 0, 1);
  touchedTo.set(arena, t.join() as number);
}

/**
 * `fn` (split passes on the arena) with its pending touch stopped, so that the other thread takes their pieces
 * (faulting in the pages they write) instead of touching pages in order; the touch goes on afterwards from
 * where it stopped.
 */
export function whileTouchPaused<T>(arena: PlaneArena, fn: () => T): T {
  if (!touching.has(arena)) return fn();
  settleTouch(arena);
  try {
    return fn();
  } finally {
    offerTouch(arena);
  }
}
