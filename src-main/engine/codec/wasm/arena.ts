/**
 * A plane's own WebAssembly memory for its whole life in the plane coder (../wavelet-plane.ts): the transform
 * coefficients stay resident in it from the forward transform to the last encode, and the quantiser, the bin
 * statistics, the squared error, the coefficient coder (./assembly/coder.ts, instantiated on the same memory)
 * and the reconstruction all work on them in place. Nothing is copied in or out per call but the samples once,
 * the coded bytes and the results handed to the caller.
 *
 * Why: on the machines this runs on, the first touch of a fresh page costs far more than the arithmetic done
 * on it (a fresh 66 MB array ≈ 250 ms of page faults against ≈ 5 ms to copy into warm memory), so the memory
 * is sized once, touched once and reused by every call on the plane.
 *
 * Layout (byte offsets): the lifting module's tables in the first page (./runtime.ts), the coder's scratch
 * from SCRATCH (./coder-constants.ts), then from {@link BASE}: the coefficients (f64), the transforms' scratch
 * (twice: the second for a second thread, ../arena-split.ts), the quantiser's chunk flags, then the work region of 8n bytes whose top
 * holds q, and last the coder's output (which may grow the memory). q is i16 (its top 2n bytes) when every
 * |q| of the plane fits (the quantiser tries that first, ../arena-quant.ts; nearly every plane at the steps
 * this program uses), else i32 (its upper half): a narrow q touches half the pages. The coder's magnitude map
 * (u8) and the LL band's differences sit just below q (they fit when the LL band is at most n/4 values, i.e.
 * one level or more; otherwise after the work region); q's non-zeros are listed there too before q is
 * overwritten. A rebuild whose plane may still be coded again (a quality floor's checks) fills
 * the whole work region with the reconstruction (f64), over q (the kernel reads each q before anything
 * writes over it; the caller first keeps q's non-zeros): a plane then touches 16n bytes of fresh memory here
 * and not 20n. Once the encode is decided ({@link PlaneArena.spend}), the last rebuild goes over the
 * coefficients instead, and the range decode of the report's check may then use q's region and the map's
 * ({@link PlaneArena.lendWork}): a plane coded under a byte budget with a narrow q never touches the work
 * region below the map ({@link PlaneArena.oneRebuild}), so 11n bytes in all (13n with an i32 q).
 *
 * Every result equals the TypeScript reference's bit for bit: the kernels perform its operations in its order.
 */

import { isExactF32Samples } from '../../../contract';
import { growMemoryTo } from '../../linalg/wasm/runtime';
import { align16, arenaBytes, BASE, CHUNK, MAX_BYTES, PAGE, STRIP } from './arena-size';
import {
  type CoderSetup,
  type CoderWasm,
  coderOn,
  coderWasmLoaded,
  type LentRegion,
  type PlanesAt,
  planesLayout,
} from './coder-runtime';
import { type BandRect, COEF, type LiftingExports, liftingOn, writeBands } from './runtime';
import { adoptArenaMemory, isSharedMemory, newArenaMemory } from './shared-memory';
import { widenStaged } from './widen-staged';

const align8 = (n: number) => (n + 7) & ~7;

/**
 * Planes smaller than this use the shared kernels of ./runtime.ts (copying), not an arena of their own: each
 * arena is a WebAssembly memory, and a process holds only so many (the stack coder analyses many small frames).
 */
export const ARENA_MIN_PIXELS = 1 << 18;
let minPixels = ARENA_MIN_PIXELS;

/** Set the smallest plane given an arena (tests use 1 to run every plane through one). */
export function setArenaMinPixels(n: number): void {
  minPixels = n;
}

/**
 * Memories of released arenas ({@link PlaneArena.release}) with their kernel instances, most recent last, kept
 * for the next arenas made on this thread: their pages are already touched, and a larger plane grows one in
 * place (a WebAssembly memory keeps its contents when it grows). The residual-first encoder releases its crop's
 * arenas before it analyses the whole planes, so the whole plane's first pages are the crop's (about 4 MB per
 * 512² crop plane that are not faulted in again).
 */
const spares: Array<{ memory: WebAssembly.Memory; lift: LiftingExports; coder: CoderWasm | null }> = [];
/** Most released memories kept (a colour crop releases three). */
const MAX_SPARES = 4;

/** A spare memory grown to `bytes`, with its instances; undefined when there is none or it cannot grow. */
function takeSpare(bytes: number) {
  // The largest spare needs the fewest new pages.
  let best = -1;
  for (let i = 0; i < spares.length; i++)
    if (best < 0 || spares[i].memory.buffer.byteLength > spares[best].memory.buffer.byteLength) best = i;
  if (best < 0) return undefined;
  const [spare] = spares.splice(best, 1);
  return growMemoryTo(spare.memory, bytes, MAX_BYTES) ? spare : undefined;
}

/** Bytes of a width×height plane's arena memory; undefined when the plane gets none (too small or too large). */
function planeArenaBytes(width: number, height: number): number | undefined {
  return width * height < minPixels ? undefined : arenaBytes(width, height);
}

/** Memories made ahead ({@link prepareArenas}) for the next arenas of one size, and what ends their touch. */
let ahead: { width: number; height: number; memories: WebAssembly.Memory[]; end: () => void } | undefined;

/**
 * Make the shared memories of `count` width×height planes' arenas now, before the planes exist (while the scan
 * is decoded), for the next arenas of that size made on this thread (before any spare), and have `touch` start
 * the first touch, on another thread, of the byte ranges their loads write in full (the coefficients); what it
 * returns ends that touch once the last of them is loaded. False (nothing kept) when such a plane gets no arena
 * or no shared memory. The memory is as fresh as {@link PlaneArena.create} would make it, and a touch that
 * changes no value leaves it so. `made`: shared memories of that size made earlier still (by the CLI's
 * launcher), taken first; their coefficients may hold any bytes (every load overwrites them all).
 */
export function prepareArenas(
  width: number,
  height: number,
  count: number,
  touch: (regions: Array<{ memory: WebAssembly.Memory; from: number; to: number }>) => () => void,
  made: readonly WebAssembly.Memory[] = [],
): boolean {
  dropPreparedArenas();
  const bytes = planeArenaBytes(width, height);
  const pages = Math.ceil((bytes ?? 0) / PAGE);
  const memories: WebAssembly.Memory[] = [];
  while (bytes !== undefined && memories.length < count) {
    const early = made[memories.length];
    const memory = early?.buffer.byteLength === pages * PAGE ? early : newArenaMemory(pages);
    if (!memory || !isSharedMemory(memory)) return false;
    memories.push(memory);
  }
  if (memories.length === 0) return false;
  const end = touch(memories.map((memory) => ({ memory, from: BASE, to: BASE + 8 * width * height })));
  ahead = { width, height, memories, end };
  return true;
}

/** Forget the memories {@link prepareArenas} made that no arena took, and end their touch. */
export function dropPreparedArenas(): void {
  const end = ahead?.end;
  ahead = undefined;
  end?.();
}

/** The next memory made ahead for a width×height plane, and with the last one what ends their touch. */
function takePrepared(width: number, height: number) {
  const a = ahead;
  if (!a || a.width !== width || a.height !== height) return undefined;
  const memory = a.memories.shift() as WebAssembly.Memory;
  if (a.memories.length > 0) return { memory };
  ahead = undefined;
  return { memory, end: a.end };
}

export class PlaneArena {
  readonly n: number;
  readonly coeffsAt: number;
  readonly tmpAt: number;
  readonly bufAt: number;
  /** The second thread's transform scratch (../arena-split.ts): tmp and the column strip, as tmpAt and bufAt. */
  readonly sideTmpAt: number;
  readonly sideBufAt: number;
  readonly flagsAt: number;
  /** Work region (8n bytes): q at its top, the coder's map below it; or the whole reconstruction. */
  readonly workAt: number;
  /** Whether q is i16 (2 bytes per value, the work region's top 2n bytes) or i32 (its upper half). */
  private narrow = true;
  /** Past the work region: the coder's output (and its map, when that does not fit below q). */
  readonly endAt: number;
  /** Where the first touch of the work region starts (../arena-split.ts offerTouch): all of it by default. */
  touchFrom: number;
  readonly lift: LiftingExports;
  private coderCache: CoderWasm | null;
  private released = false;
  /** The coefficients are read no more (the encode is decided); q's region is lent, and the loan is not over yet. */
  private spent = false;
  private lent = false;
  /** Ends the touch of memories made ahead, once this arena is loaded ({@link loaded}). */
  private afterLoad: (() => void) | undefined;
  /** What {@link spend} deferred until the last rebuild has read q. */
  private deferred: (() => void) | undefined;
  private buffer: ArrayBufferLike;
  private coeffView: Float64Array;

  private constructor(
    readonly memory: WebAssembly.Memory,
    lift: LiftingExports,
    readonly width: number,
    readonly height: number,
    coder: CoderWasm | null = null,
  ) {
    this.lift = lift;
    this.coderCache = coder;
    const n = width * height;
    this.n = n;
    this.coeffsAt = BASE;
    this.tmpAt = BASE + align16(8 * n);
    this.bufAt = this.tmpAt + align16(16 * Math.max(width, height));
    this.sideTmpAt = this.bufAt + align16(8 * STRIP * height);
    this.sideBufAt = this.sideTmpAt + align16(16 * Math.max(width, height));
    this.flagsAt = this.sideBufAt + align16(8 * STRIP * height);
    this.workAt = this.flagsAt + align16(Math.ceil(n / CHUNK));
    this.endAt = this.workAt + align16(8 * n);
    this.touchFrom = this.workAt;
    this.buffer = memory.buffer;
    this.coeffView = new Float64Array(this.buffer, this.coeffsAt, n);
    adoptArenaMemory(memory, lift);
  }

  /** An arena for a width×height plane, or null (too small, no kernels, or no memory). */
  static create(width: number, height: number): PlaneArena | null {
    const bytes = planeArenaBytes(width, height);
    if (bytes === undefined) return null;
    const early = takePrepared(width, height);
    const spare = early ? undefined : takeSpare(bytes);
    if (spare) return new PlaneArena(spare.memory, spare.lift, width, height, spare.coder);
    const memory = early?.memory ?? newArenaMemory(Math.ceil(bytes / PAGE));
    const lift = memory && liftingOn(memory);
    if (!lift) {
      early?.end?.();
      return null;
    }
    const arena = new PlaneArena(memory, lift, width, height);
    arena.afterLoad = early?.end;
    return arena;
  }

  /** The load is done: end the touch ahead of it ({@link prepareArenas}) if this arena's was the last. */
  loaded(): void {
    const end = this.afterLoad;
    this.afterLoad = undefined;
    end?.();
  }

  /**
   * The caller is done with this arena: its memory (and its kernel instances) goes to the next arena made on
   * this thread, which overwrites it. Any later use of this arena throws.
   */
  release(): void {
    if (this.released) return;
    this.released = true;
    // A region still lent may yet be written by the other thread: that memory goes to no other arena.
    if (this.lent) return;
    spares.push({ memory: this.memory, lift: this.lift, coder: this.coderCache });
    if (spares.length > MAX_SPARES) spares.shift();
  }

  /** Whether {@link release} was called. */
  get isReleased(): boolean {
    return this.released;
  }

  /** Where q lies: the work region's top 2n bytes (i16) or its upper half (i32), as {@link narrowQ} says. */
  get qAt(): number {
    return this.workAt + (this.narrow ? 6 : 4) * this.n;
  }

  /** Whether q is i16 (every |q| at most 32767), not i32. */
  get narrowQ(): boolean {
    return this.narrow;
  }

  /** The next q written here is i16 (`narrow`) or i32: it goes where {@link qAt} then says. */
  setNarrowQ(narrow: boolean): void {
    this.narrow = narrow;
  }

  /** The q values where they lie (a view: valid until the next call on this arena that may grow it). */
  qView(): Int32Array | Int16Array {
    const buf = this.fresh();
    return this.narrow ? new Int16Array(buf, this.qAt, this.n) : new Int32Array(buf, this.qAt, this.n);
  }

  /** Refresh the views if the memory grew (the coder grows it when its output outgrows the work region). */
  private fresh(): ArrayBufferLike {
    if (this.released) throw new Error('rankfold engine: a released plane arena was used');
    if (this.buffer !== this.memory.buffer) {
      this.buffer = this.memory.buffer;
      this.coeffView = new Float64Array(this.buffer, this.coeffsAt, this.n);
    }
    return this.buffer;
  }

  /**
   * Where the coder's map goes below q when the LL band has `ll` values ({@link coderLayout}: n bytes, then
   * the LL band's differences), aligned down to 8; for a narrow q when the first touch is planned, before any q.
   */
  private mapAt(ll: number): number {
    return Math.floor((this.qAt - align8(this.n) - align8(4 * ll)) / 8) * 8;
  }

  /**
   * This plane is rebuilt once, over its coefficients, after its encode is decided (a byte budget): the first
   * touch of the work region (../arena-split.ts) leaves out the part below the coder's map (for a narrow q,
   * which nearly every plane gets; an i32 q touches the rest itself), which nothing then writes. `levels`: the transform's levels (they size the LL band).
   */
  oneRebuild(levels: number): void {
    let w = this.width;
    let h = this.height;
    for (let l = 0; l < levels; l++) {
      w = (w + 1) >> 1;
      h = (h + 1) >> 1;
    }
    const at = this.mapAt(w * h);
    if (at >= this.workAt) this.touchFrom = at;
  }

  /**
   * The encode is decided: the caller reads these coefficients no more (../resident-plane then refuses them),
   * so the plane's last rebuild goes over them, and `start` runs once that rebuild has read q
   * ({@link runDeferred}), for a range decode that may then take the work region ({@link lendWork}).
   */
  spend(start: () => void): void {
    this.fresh();
    this.runDeferred();
    this.spent = true;
    this.deferred = start;
  }

  /** Run what {@link spend} deferred, if it has not run yet: q is read (or will not be). */
  runDeferred(): void {
    const start = this.deferred;
    this.deferred = undefined;
    start?.();
  }

  /**
   * Lend q's region and the map's below it (memory the encode touched), to a decode on another thread
   * (../coeff-coder-resident.ts decodeInPlaceV2) of the plane coded with band table `table`: the caller runs
   * no coder on this memory and reads no q here until {@link endLoan}. The coded bytes go where the coder's
   * output went. Undefined while a loan is running.
   */
  lendWork(table: Int32Array): LentRegion | undefined {
    const buffer = this.fresh();
    if (this.lent) return undefined;
    this.lent = true;
    const at = this.coderLayout(table);
    const { q, mag, tail, narrow } = at;
    return { memory: this.memory, at: q, bytes: buffer.byteLength - q, mag, tail, narrow };
  }

  /** The decode given {@link lendWork}'s region is over: nothing writes it any more. */
  endLoan(): void {
    this.lent = false;
  }

  /** Whether the work region is lent now (no coder may run on this memory, no q be read, meanwhile). */
  get onLoan(): boolean {
    return this.lent;
  }

  /** Whether the encode was decided ({@link spend}): this plane's coefficients are overwritten by its rebuild. */
  get coefficientsSpent(): boolean {
    return this.spent;
  }

  /** The resident coefficients (a view: valid until the next call on this arena that may grow it). */
  coeffs(): Float64Array {
    this.fresh();
    return this.coeffView;
  }

  /**
   * Copy the samples in as f64: float or integer ones through the widening kernel, staged piece by piece in the
   * transforms' scratch (not in q's region, whose fresh pages the rebuild touches later: a second thread may
   * touch them first, ../arena-split.ts).
   */
  load(plane: ArrayLike<number>): void {
    this.fresh();
    if (isExactF32Samples(plane))
      widenStaged(this.memory, this.lift, this.coeffsAt, plane, this.tmpAt, this.sideTmpAt - this.tmpAt);
    else if (ArrayBuffer.isView(plane)) this.coeffView.set(plane as unknown as ArrayLike<number>);
    else for (let i = 0; i < this.n; i++) this.coeffView[i] = plane[i];
  }

  /**
   * Transform the plane at `at` (the coefficients by default) in place, forward or inverse; `coefficients`:
   * the lifting steps α, β, γ, δ and the scale ζ.
   */
  transform(levels: number, coefficients: readonly number[], inverse: boolean, at = this.coeffsAt): void {
    new Float64Array(this.fresh(), COEF, coefficients.length).set(coefficients);
    const run = inverse ? this.lift.inverse97 : this.lift.forward97;
    run(at, this.width, this.height, levels, this.tmpAt, this.bufAt, COEF);
  }

  /** Write the band table and per-band parameters for the next kernel call. */
  bands(bands: BandRect[], par: (bi: number) => number[]): void {
    writeBands(this.fresh(), bands, par);
  }

  /**
   * Where the coder's arrays go for the band table `table`: q where it lies, the magnitude map and the LL
   * band's differences below q when they fit there, and the output (which may grow the memory) last.
   */
  coderLayout(table: Int32Array): PlanesAt {
    // The map and the LL band's differences take planesLayout's tail at 0 bytes: right below q.
    const mag = Math.floor((this.qAt - planesLayout(this.n, table, 0, 0).tail) / 8) * 8;
    const below = planesLayout(this.n, table, this.qAt, mag);
    const narrow = this.narrow;
    if (mag >= this.workAt && below.tail <= this.qAt) return { ...below, tail: this.endAt, narrow };
    return { ...planesLayout(this.n, table, this.qAt, this.endAt), narrow };
  }

  /** The coefficient coder on this memory, or null where its port is unavailable or disabled. */
  coder(setup: CoderSetup): CoderWasm | null {
    if (!this.coderCache) this.coderCache = coderOn(this.memory, setup);
    return coderWasmLoaded() ? this.coderCache : null;
  }
}
