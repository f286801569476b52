/**
 * The codec's WebAssembly SIMD kernels (./assembly/lifting.ts): the 9/7 lifting and the plane coder's
 * quantiser and reconstruction, each bit-identical to its TypeScript reference in
 * ../wavelet-transform.ts and ../wavelet-plane.ts. Every function here returns null (or false) when the
 * kernels are unavailable (no SIMD, not yet compiled on a page, disabled by a test, or memory exhausted); the
 * caller then runs the TypeScript reference, with the same results.
 *
 * Memory layout of one call (byte offsets): the lifting coefficients and the band tables in the first page,
 * then the plane's samples from {@link DATA}, then the call's other arrays.
 */
import { decodeBase64 } from '../../linalg/wasm/runtime';
import { LazyKernel, type LoadedKernel, reserveBytes } from '../../metrics/wasm/loader';
import { CHUNK } from './arena-size';
import { wasmBase64 } from './generated/lifting';
import { wasmBase64 as sharedBase64 } from './generated/lifting-shared';
import { isSharedMemory } from './shared-memory';

/** A column pass kernel: x, row stride, the level's w and h, the strips' columns c0 … c1 − 1, buf, k. */
type ColumnPass = (
  x: number,
  width: number,
  w: number,
  h: number,
  c0: number,
  c1: number,
  buf: number,
  k: number,
) => void;

/** The lifting module's exports (./assembly/lifting.ts); pointers are byte offsets into its memory. */
export interface LiftingExports {
  forward97(x: number, w: number, h: number, levels: number, tmp: number, buf: number, k: number): void;
  inverse97(x: number, w: number, h: number, levels: number, tmp: number, buf: number, k: number): void;
  /** One level's row pass over rows y0 … y1 − 1 (y0 even), forward or inverse (../arena-split.ts). */
  forwardRows(x: number, width: number, w: number, y0: number, y1: number, tmp: number, k: number): void;
  inverseRows(x: number, width: number, w: number, y0: number, y1: number, tmp: number, k: number): void;
  /** One level's column pass over the strips from column c0 (a multiple of STRIP) below c1. */
  forwardCols: ColumnPass;
  inverseCols: ColumnPass;
  quantise(
    x: number,
    q: number,
    width: number,
    nb: number,
    geo: number,
    par: number,
    flags: number,
    n: number,
  ): number;
  /**
   * Bands b0 … b1 − 1 quantised (flags zeroed first by the caller), with their bin statistics at out + 32·b; with
   * q = 0 only the statistics (no q, no flags).
   */
  quantiseStats(
    x: number,
    q: number,
    width: number,
    b0: number,
    b1: number,
    geo: number,
    par: number,
    flags: number,
    out: number,
  ): number;
  /** quantiseStats into an i16 q: 2^30 (q unfinished) at the first |q| past 32767. */
  quantiseStats16: LiftingExports['quantiseStats'];
  dequantise(q: number, x: number, width: number, nb: number, geo: number, par: number): void;
  /** dequantise of the raster positions i0 … i1 − 1, in place over q (./assembly/lifting.ts). */
  dequantiseInPlace(
    q: number,
    x: number,
    width: number,
    nb: number,
    geo: number,
    par: number,
    i0: number,
    i1: number,
  ): void;
  /** The same on an i16 q (the arena's narrow q, ./arena.ts). */
  dequantiseInPlace16: LiftingExports['dequantiseInPlace'];
  widen(dst: number, src: number, n: number): void;
  compactNonZero(q: number, flags: number, n: number, at: number, v: number): number;
  binStats(x: number, q: number, width: number, nb: number, geo: number, par: number, out: number): void;
  squaredError(x: number, q: number, width: number, nb: number, geo: number, par: number, out: number): void;
  /** compactNonZero, binStats and squaredError of an i16 q. */
  compactNonZero16: LiftingExports['compactNonZero'];
  binStats16: LiftingExports['binStats'];
  squaredError16: LiftingExports['squaredError'];
  /** Bands b0 … b1 − 1: squared error of the quantised values (not written), d1, d2 read at out + 32·b, Σ at + 16. */
  errorsAt(x: number, width: number, b0: number, b1: number, geo: number, par: number, out: number): void;
  bandMax(x: number, width: number, nb: number, geo: number, out: number): void;
  /**
   * n decoded grey samples (f32 at out) of a plane whose base is one value, and their squared errors against
   * the f32 source at src added to the sums at st (../resident-rows.ts).
   */
  greyFlatRows(
    x: number,
    src: number,
    out: number,
    n: number,
    base: number,
    max: number,
    block: number,
    st: number,
  ): void;
  /**
   * The band x0, y0, w × h's magnitudes at the raster positions ≡ 0 (mod stride), sorted into out (f64; tmp as
   * many, hist 6·2048 u32): the rate model's sample (../wavelet-estimate.ts). Returns how many.
   */
  sortedSample(
    x: number,
    width: number,
    x0: number,
    y0: number,
    w: number,
    h: number,
    stride: number,
    out: number,
    tmp: number,
    hist: number,
  ): number;
}

const lifting = new LazyKernel<LiftingExports>(wasmBase64);

/** Where the tables live (past any static data of the module, which has none today). */
export const COEF = 16384;
export const GEO = COEF + 256;
export const PAR = GEO + 1024;
/** Per-band results of the statistics kernels (4 f64 per band). */
export const RESULTS = PAR + 1024;
/** Start of the bulk arrays (one page in, 16-byte aligned). */
const DATA = 65536;
/** The kernel's column strip width (assembly/lifting.ts STRIP). */
const STRIP = 32;
/** Most bands a plane has: LL plus three per level, at most 6 levels (wavelet-transform.ts MAX_LEVELS). */
const MAX_BANDS = 1 + 3 * 6;

/** A band's rectangle, as ../wavelet-transform.ts Band. */
export interface BandRect {
  x0: number;
  y0: number;
  w: number;
  h: number;
}

const align16 = (n: number) => (n + 15) & ~15;

/** The kernel with room for `bytes` bytes, and the lifting coefficients written, or null. */
function kernelWith(bytes: number, coefficients?: readonly number[]): LoadedKernel<LiftingExports> | null {
  const k = lifting.get();
  if (!k || !reserveBytes(k, bytes)) return null;
  if (coefficients) new Float64Array(k.memory.buffer, COEF, coefficients.length).set(coefficients);
  return k;
}

/** Bytes of scratch the transforms need past the plane: tmp (2 rows of f64 pairs) and the column strip. */
function scratchBytes(width: number, height: number): number {
  return align16(16 * Math.max(width, height)) + align16(8 * STRIP * height);
}

/**
 * The forward (`inverse` false) or inverse 9/7 transform of `src` (width×height samples, any numeric array) into
 * `out` (may be `src`), in the kernels; false when unavailable. `coefficients`: α, β, γ, δ, ζ.
 */
export function waveletWasm(
  src: ArrayLike<number>,
  out: Float64Array,
  width: number,
  height: number,
  levels: number,
  coefficients: readonly number[],
  inverse: boolean,
): boolean {
  const n = width * height;
  const tmp = DATA + align16(8 * n);
  const buf = tmp + align16(16 * Math.max(width, height));
  const k = kernelWith(DATA + align16(8 * n) + scratchBytes(width, height), coefficients);
  if (!k) return false;
  const x = new Float64Array(k.memory.buffer, DATA, n);
  if (ArrayBuffer.isView(src)) x.set(src as unknown as ArrayLike<number>);
  else for (let i = 0; i < n; i++) x[i] = src[i];
  (inverse ? k.exports.inverse97 : k.exports.forward97)(DATA, width, height, levels, tmp, buf, COEF);
  out.set(x);
  return true;
}

/** Write the band rectangles and 3 f64 parameters per band into the tables of a kernels' memory. */
export function writeBands(buf: ArrayBufferLike, bands: BandRect[], par: (bi: number) => number[]): void {
  if (bands.length > MAX_BANDS) throw new RangeError(`${bands.length} bands; the kernels take ${MAX_BANDS}`);
  const geo = new Int32Array(buf, GEO, 4 * bands.length);
  const p = new Float64Array(buf, PAR, 4 * bands.length);
  bands.forEach((b, i) => {
    geo.set([b.x0, b.y0, b.w, b.h], 4 * i);
    p.set(par(i), 4 * i);
  });
}

/** q entries per chunk of the kernel's non-zero map (./arena-size.ts). */
export { CHUNK, CHUNK_BITS } from './arena-size';

/**
 * Copy the chunks of the n values of q at `qAt` in `buf` whose flag (u8 at `flagsAt`, one per chunk) is set
 * into `out` (zeros on entry: its pages for chunks of zeros are never touched).
 */
export function copyFlaggedChunks(
  buf: ArrayBufferLike,
  qAt: number,
  flagsAt: number,
  n: number,
  out: Int32Array,
  narrow = false,
): void {
  const all = narrow ? new Int16Array(buf, qAt, n) : new Int32Array(buf, qAt, n);
  const flags = new Uint8Array(buf, flagsAt, Math.ceil(n / CHUNK));
  for (let j = 0; j < flags.length; j++)
    if (flags[j]) out.set(all.subarray(j * CHUNK, Math.min(n, (j + 1) * CHUNK)), j * CHUNK);
}

/**
 * Dead-zone quantisation of `coeffs` into `q` (all zeros on entry; only the chunks that hold non-zeros are
 * written, so the untouched pages of a fresh array are never faulted in) with per band step, rounding offset
 * and zero threshold; the number of non-zero q, or null when the kernels are unavailable.
 */
export function quantiseWasm(
  coeffs: Float64Array,
  q: Int32Array,
  width: number,
  bands: BandRect[],
  par: (bi: number) => [step: number, rho: number, zero: number],
): number | null {
  const n = coeffs.length;
  const chunks = Math.ceil(n / CHUNK);
  const qAt = DATA + align16(8 * n);
  const flagsAt = qAt + align16(4 * n);
  const k = kernelWith(flagsAt + chunks);
  if (!k) return null;
  new Float64Array(k.memory.buffer, DATA, n).set(coeffs);
  writeBands(k.memory.buffer, bands, par);
  const nonZero = k.exports.quantise(DATA, qAt, width, bands.length, GEO, PAR, flagsAt, n);
  copyFlaggedChunks(k.memory.buffer, qAt, flagsAt, n, q);
  return nonZero;
}

/**
 * Rebuild coefficients from `q` (per band step Δ and offsets d1, d2) and, when `levels` ≥ 0, inverse-transform
 * them: the plane as a new array, or null when the kernels are unavailable. `coefficients`: α, β, γ, δ, ζ.
 */
export function reconstructWasm(
  q: Int32Array,
  width: number,
  height: number,
  levels: number,
  bands: BandRect[],
  par: (bi: number) => [step: number, d1: number, d2: number],
  coefficients: readonly number[],
): Float64Array | null {
  const n = width * height;
  const qAt = DATA + align16(8 * n);
  const tmp = qAt + align16(4 * n);
  const buf = tmp + align16(16 * Math.max(width, height));
  const k = kernelWith(tmp + scratchBytes(width, height), coefficients);
  if (!k) return null;
  new Int32Array(k.memory.buffer, qAt, n).set(q);
  writeBands(k.memory.buffer, bands, (bi) => [...par(bi), 0]);
  k.exports.dequantise(qAt, DATA, width, bands.length, GEO, PAR);
  if (levels > 0) k.exports.inverse97(DATA, width, height, levels, tmp, buf, COEF);
  return new Float64Array(k.memory.buffer, DATA, n).slice();
}

/** The lifting module compiled for instantiation on other memories (./arena.ts); null: not possible here. */
let compiled: WebAssembly.Module | null | undefined;
/** The same kernels built on a shared memory (./assembly/lifting-shared.ts). */
let compiledShared: WebAssembly.Module | null | undefined;

function compile(base64: string): WebAssembly.Module | null {
  try {
    return new WebAssembly.Module(decodeBase64(base64));
  } catch {
    return null;
  }
}

/**
 * The lifting kernels instantiated on `memory` (a plane's own, ./arena.ts; plain or shared), or null where the
 * kernels are unavailable or disabled, or a synchronous compile is refused (a browser page: the shared kernels
 * serve it).
 */
export function liftingOn(memory: WebAssembly.Memory): LiftingExports | null {
  if (!lifting.get()) return null;
  let m: WebAssembly.Module | null;
  if (isSharedMemory(memory)) {
    if (compiledShared === undefined) compiledShared = compile(sharedBase64);
    m = compiledShared;
  } else {
    if (compiled === undefined) compiled = compile(wasmBase64);
    m = compiled;
  }
  if (!m) return null;
  const instance = new WebAssembly.Instance(m, { env: { memory, abort: abortHandler } });
  return instance.exports as unknown as LiftingExports;
}

function abortHandler(): never {
  throw new Error('rankfold engine: WebAssembly kernel aborted');
}

/** Whether the codec's kernels run (for tests that must exercise them, not the fallback). */
export function codecKernelsActive(): boolean {
  return lifting.get() !== null;
}
