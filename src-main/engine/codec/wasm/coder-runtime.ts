/**
 * Loads the WebAssembly port of coefficient coder 2 and its range coder (./assembly/coder.ts) and owns its
 * linear memory. The module is small (about 9 KB), so it is compiled synchronously on first use; wherever
 * WebAssembly is missing or refuses a synchronous compile (a browser page's main thread may), {@link coderWasm}
 * returns null and the caller runs the TypeScript coder, which gives the same bytes and the same planes.
 */
import { decodeBase64 } from '../../linalg/wasm/runtime';
import { reserveBytes } from '../../metrics/wasm/loader';
import {
  AT_BANDS,
  AT_COUNTS,
  AT_NB_LUT,
  AT_OFFSET_CODES,
  AT_RECIP_FAST,
  AT_RECIP_SLOW,
  BAND_FIELDS,
  SCRATCH,
  SCRATCH_BYTES,
} from './coder-constants';
import { wasmBase64 } from './generated/coder';
import { wasmBase64 as sharedBase64 } from './generated/coder-shared';
import { isSharedMemory } from './shared-memory';

/**
 * One direction of the port over a plane of n coefficients: q (i32), the magnitude map (u8) and the LL band's
 * differences (i32) at byte offsets into the module's memory, the row stride and the band count, then two
 * arguments of that direction.
 */
type PlaneKernel = (
  q: number,
  mag: number,
  d: number,
  n: number,
  width: number,
  nBands: number,
  a: number,
  b: number,
) => number;

/** The port's exports. */
interface CoderExports {
  /** Range-code q (a: 1 if any value is non-zero, b: where the bytes go); returns the byte count. */
  encode: PlaneKernel;
  /** Decode into q (a: where the bytes are, b: how many); returns the bytes read, or −1 if it read past their end. */
  decode: PlaneKernel;
  /** The same on an i16 q; decode16 fails (ERR_NARROW) at a value an i16 q cannot hold. */
  encode16: PlaneKernel;
  decode16: PlaneKernel;
}

export interface CoderWasm {
  readonly exports: CoderExports;
  readonly memory: WebAssembly.Memory;
}

/** What the host gives the module once: the coder's tables, and the function that throws its errors. */
export interface CoderSetup {
  recipFast: Int32Array;
  recipSlow: Int32Array;
  nbLut: Uint8Array;
  /** Throws the RangeError for error `code` (see coder-constants.ts) with `value`; never returns. */
  fail(code: number, value: number): never;
}

/** Bytes in a WebAssembly page. */
const PAGE = 65536;
/** A memory grown past this is dropped after use, so one very large plane does not pin it for the process. */
const KEEP_BYTES = 256 * 2 ** 20;

/** undefined: not tried yet; null: WebAssembly unavailable here. */
let module: WebAssembly.Module | null | undefined;
/** The same coder built on a shared memory (./assembly/coder-shared.ts), for a plane arena shared by two threads. */
let sharedModule: WebAssembly.Module | null | undefined;
let coder: CoderWasm | null = null;
let disabled = false;

/** Byte offset where the planes may start (after the fixed scratch area). */
const PLANES_AT = SCRATCH + SCRATCH_BYTES;

/** The compiled module, or null where WebAssembly is unavailable or refuses a synchronous compile. */
function compiledModule(): WebAssembly.Module | null {
  if (module === undefined) {
    try {
      module = new WebAssembly.Module(decodeBase64(wasmBase64));
    } catch {
      module = null;
    }
  }
  return module;
}

/** The port instantiated on `memory` (at least PLANES_AT bytes), with the coder's tables written. */
function instantiate(m: WebAssembly.Module, memory: WebAssembly.Memory, setup: CoderSetup): CoderWasm {
  const instance = new WebAssembly.Instance(m, {
    env: {
      memory,
      coderError: setup.fail,
      abort: () => {
        throw new Error('rankfold engine: the WebAssembly coefficient coder aborted');
      },
    },
  });
  const buf = memory.buffer;
  new Int32Array(buf, SCRATCH + AT_RECIP_FAST, setup.recipFast.length).set(setup.recipFast);
  new Int32Array(buf, SCRATCH + AT_RECIP_SLOW, setup.recipSlow.length).set(setup.recipSlow);
  new Uint8Array(buf, SCRATCH + AT_NB_LUT, setup.nbLut.length).set(setup.nbLut);
  return { exports: instance.exports as unknown as CoderExports, memory };
}

/** The port, instantiated on first use; null where WebAssembly is unavailable or disabled. */
export function coderWasm(setup: CoderSetup): CoderWasm | null {
  if (disabled) return null;
  if (coder) return coder;
  const m = compiledModule();
  if (!m) return null;
  coder = instantiate(m, new WebAssembly.Memory({ initial: Math.ceil(PLANES_AT / PAGE) }), setup);
  return coder;
}

/**
 * The port on another module's memory (a plane's own, ./arena.ts: its planes at offsets the caller gives,
 * its scratch area at SCRATCH as here); null where the port is unavailable or disabled.
 */
export function coderOn(memory: WebAssembly.Memory, setup: CoderSetup): CoderWasm | null {
  if (disabled) return null;
  if (!compiledModule()) return null;
  if (isSharedMemory(memory) && sharedModule === undefined) {
    try {
      sharedModule = new WebAssembly.Module(decodeBase64(sharedBase64));
    } catch {
      sharedModule = null;
    }
  }
  const m = isSharedMemory(memory) ? sharedModule : module;
  return m ? instantiate(m, memory, setup) : null;
}

/** After a call: drop a memory that grew past {@link KEEP_BYTES} (the next call makes a fresh one). */
function releaseMemory(): void {
  if (coder && coder.memory.buffer.byteLength > KEEP_BYTES) coder = null;
}

const align8 = (x: number) => Math.ceil(x / 8) * 8;

/**
 * Where the planes go, for a plane of n coefficients: q (i32), the magnitude map (u8), the LL band's
 * differences (i32), then `tail`, the last region: the encoder's output or the decoder's input. q and the map
 * follow each other unless given (./arena.ts places them apart).
 */
export function planesLayout(n: number, table: Int32Array, q = PLANES_AT, mag = q + 4 * n): PlanesAt {
  const d = align8(mag + n);
  // The LL band's differences need w·h integers (orientation 0; bandsFor in ../wavelet-transform.ts has one).
  let ll = 0;
  for (let f = 0; f < table.length; f += BAND_FIELDS)
    if (table[f + 4] === 0) ll = Math.max(ll, table[f + 2] * table[f + 3]);
  const tail = align8(d + 4 * ll);
  return { q, mag, d, tail };
}

/**
 * Bytes of a shared plane arena's memory (./arena.ts) lent to a decode on another thread: nothing else reads
 * or writes them, nor runs a coder on that memory, until the decode is done.
 */
export interface LentRegion {
  memory: WebAssembly.Memory;
  /** Byte offset (a multiple of 8) and length of the region. */
  at: number;
  bytes: number;
  /**
   * Where q goes is `at`; the magnitude map (then the LL band's differences) at `mag` below it and the bytes at
   * `tail`, when given (also lent): ./arena.ts lendWork. Otherwise all follow each other from `at`.
   */
  mag?: number;
  tail?: number;
  /** q is i16 (the arena's narrow q), not i32. */
  narrow?: boolean;
}

/** q values where they lie in a memory: i32, or i16 (a plane arena's narrow q, ./arena.ts). */
export type QView = Int32Array | Int16Array;

/** Write the band table into the scratch area; returns the band count. */
function putBands(buf: ArrayBuffer | SharedArrayBuffer, table: Int32Array): number {
  new Int32Array(buf, SCRATCH + AT_BANDS, table.length).set(table);
  return table.length / BAND_FIELDS;
}

/** Where a plane's arrays are in the port's memory: q (i32), the magnitude map (u8), the LL differences, the output. */
export interface PlanesAt {
  q: number;
  mag: number;
  d: number;
  tail: number;
  /** q is i16 (a plane arena's narrow q, ./arena.ts), not i32. */
  narrow?: boolean;
}

/**
 * Encode the n values of q already at `at.q` in `c`'s memory, given their bin counts and the offset codes `k`
 * made from them (binStats and offsetCodes in ../coeff-coder.ts). `table`: the band table of ../coeff-coder.ts.
 * Returns the bytes (a copy).
 */
export function encodeAt(
  c: CoderWasm,
  at: PlanesAt,
  n: number,
  width: number,
  table: Int32Array,
  counts: Int32Array,
  k: Int32Array,
): Uint8Array {
  const buf = c.memory.buffer;
  const nb = putBands(buf, table);
  new Int32Array(buf, SCRATCH + AT_COUNTS, 2 * nb).set(counts);
  new Int32Array(buf, SCRATCH + AT_OFFSET_CODES, 2 * nb).set(k);
  const nonZero = counts.some((x) => x > 0) ? 1 : 0;
  const len = (at.narrow ? c.exports.encode16 : c.exports.encode)(
    at.q,
    at.mag,
    at.d,
    n,
    width,
    nb,
    nonZero,
    at.tail,
  );
  return new Uint8Array(c.memory.buffer, at.tail, len).slice();
}

/**
 * Encode q with the port, given the bin counts of q (binStats in ../coeff-coder.ts) and the offset codes `k`
 * made from them. `table`: the band table of ../coeff-coder.ts. Returns the bytes, or null if the plane does
 * not fit in the port's memory.
 */
export function encodeWasm(
  c: CoderWasm,
  q: Int32Array,
  width: number,
  table: Int32Array,
  counts: Int32Array,
  k: Int32Array,
): Uint8Array | null {
  const n = q.length;
  const at = planesLayout(n, table);
  // Room for about 1 bit per coefficient at first; the module grows its memory if the bytes need more.
  if (!reserveBytes(c, at.tail + (n >> 3) + PAGE)) return null;
  try {
    new Int32Array(c.memory.buffer, at.q, n).set(q);
    return encodeAt(c, at, n, width, table, counts, k);
  } finally {
    releaseMemory();
  }
}

/**
 * Decode with the port into q: returns the bytes read (−1: it read past their end), the bin counts of the
 * decoded q and the decoded offset codes. Null if the plane does not fit in the port's memory.
 */
export function decodeWasm(
  c: CoderWasm,
  bytes: Uint8Array,
  q: Int32Array,
  width: number,
  table: Int32Array,
): { pos: number; counts: Int32Array; k: Int32Array } | null {
  return decodeInPort(c, bytes, q.length, width, table, (got, decoded) => {
    q.set(decoded);
    return got;
  });
}

/**
 * Decode n coefficients with the port in its own memory and give `read` what {@link decodeAt} returns and a
 * view of the decoded q there, valid during the call (no copy into fresh pages).
 * Null if the plane does not fit in the port's memory.
 */
export function decodeInPort<T>(
  c: CoderWasm,
  bytes: Uint8Array,
  n: number,
  width: number,
  table: Int32Array,
  read: (got: { pos: number; counts: Int32Array; k: Int32Array }, q: Int32Array) => T,
): T | null {
  try {
    const got = decodeAt(c, planesLayout(n, table), n, width, table, bytes);
    return got && read(got, new Int32Array(c.memory.buffer, got.at.q, n));
  } finally {
    releaseMemory();
  }
}

/**
 * Decode with the port into q where `at` places it in `c`'s memory (a plane's own memory, ./arena.ts: its
 * coderLayout), leaving it there: what {@link decodeWasm} returns, or null if the memory cannot hold the bytes.
 * Into an i16 q (`at.narrow`), also null when the decode fails in any way (a value it cannot hold, or a
 * stream the i32 decode would refuse too): the caller then decodes into an i32 q, which gives the answer.
 */
export function decodeAt(
  c: CoderWasm,
  at: PlanesAt,
  n: number,
  width: number,
  table: Int32Array,
  bytes: Uint8Array,
): { at: PlanesAt; pos: number; counts: Int32Array; k: Int32Array } | null {
  if (!reserveBytes(c, at.tail + bytes.length)) return null;
  const buf = c.memory.buffer;
  new Uint8Array(buf, at.tail, bytes.length).set(bytes);
  const nb = putBands(buf, table);
  let pos: number;
  try {
    pos = (at.narrow ? c.exports.decode16 : c.exports.decode)(
      at.q,
      at.mag,
      at.d,
      n,
      width,
      nb,
      at.tail,
      bytes.length,
    );
  } catch (err) {
    if (at.narrow) return null;
    throw err;
  }
  return {
    at,
    pos,
    counts: new Int32Array(buf, SCRATCH + AT_COUNTS, 2 * nb).slice(),
    k: new Int32Array(buf, SCRATCH + AT_OFFSET_CODES, 2 * nb).slice(),
  };
}

/** Whether the port is in use: compiled here, and not disabled. */
export function coderWasmLoaded(): boolean {
  return !disabled && !!module;
}

/**
 * Force the TypeScript coder (true) or allow the WebAssembly port again (false): for the tests that compare
 * the two, and for diagnosing a suspected fault in the port.
 */
export function setCoderWasmDisabled(value: boolean): void {
  disabled = value;
}
