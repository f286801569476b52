/**
 * The SSIM kernel (./assembly/ssim.ts) behind ../ssim.ts: bit-identical to SsimStream's TypeScript
 * filterRow/windowRow. The kernel's memory holds one stream's ring of filtered rows at a time; a stream that
 * calls while another owns it first saves the other's ring to that stream's own array, so streams may be
 * interleaved (one per channel) and every stream's ring stays exact.
 *
 * Layout (byte offsets): taps and ring offsets in the first page, then the ring, the row products, and the
 * input rows of one call.
 */
import { isExactF32Samples } from '../../../contract';
import { wasmBase64 } from './generated/ssim';
import { LazyKernel, reserveBytes } from './loader';

interface SsimExports {
  ssimRows(
    a: number,
    b: number,
    width: number,
    rows: number,
    y0: number,
    firstWin: number,
    R: number,
    g: number,
    ring: number,
    tmp: number,
    offs: number,
    C1: number,
    C2: number,
    total: number,
    sums: number,
    f32in: number,
    acc: number,
  ): number;
}

const kernel = new LazyKernel<SsimExports>(wasmBase64);

const TAPS = 16384;
const OFFS = TAPS + 4096;
const DATA = 65536;
/** Bytes of input (both planes) copied per kernel call. */
const CALL_BYTES = 1 << 20;

/** The stream state the kernel reads and writes (SsimStream's fields). */
export interface SsimRing {
  readonly width: number;
  readonly R: number;
  readonly g: Float64Array;
  /** Values in the ring of filtered rows. */
  readonly ringLength: number;
  /** The stream's own copy of its ring (made on first use, zeros until a ring is saved into it). */
  ring(): Float64Array;
  /** That copy if it was made (by the TypeScript path or a save), else undefined: the ring is all zeros. */
  ownRing(): Float64Array | undefined;
  /** Whether every row was added: the ring is not read again, so it need not be saved. */
  finished(): boolean;
  readonly C1: number;
  readonly C2: number;
}

let owner: SsimRing | null = null;

const align16 = (n: number) => (n + 15) & ~15;

/** Save the owner's ring back to its own array (before the TypeScript path touches it). */
export function releaseRing(s: SsimRing): void {
  if (owner !== s) return;
  const k = kernel.get(true);
  if (k && !s.finished()) s.ring().set(new Float64Array(k.memory.buffer, DATA, s.ringLength));
  owner = null;
}

/**
 * Filter `rows` rows of a (from aOff) and b (from bOff), row stride width, as ring rows y0 … y0 + rows − 1, and
 * sum each window row ending at y ≥ firstWin: into sums[y − firstWin] when `sums` is given, else added to
 * `total` in row order. Returns the new total, or null when the kernel is unavailable (nothing was done).
 */
export function ssimRowsWasm(
  s: SsimRing,
  a: ArrayLike<number>,
  b: ArrayLike<number>,
  aOff: number,
  bOff: number,
  y0: number,
  rows: number,
  firstWin: number,
  total: number,
  sums: Float64Array | null,
): number | null {
  const k = kernel.get();
  if (!k) return null;
  const { width, R } = s;
  const { chunk, ringAt, tmpAt, aAt, bAt, sumsAt, accAt, end } = callLayout(width, s.ringLength);
  if (!reserveBytes(k, end)) return null;
  const buf = () => k.memory.buffer;
  if (owner !== s) {
    if (owner) releaseRing(owner);
    // A stream without its own array yet has an all-zero ring (as that array starts): no array is made for it.
    const ring = new Float64Array(buf(), ringAt, s.ringLength);
    const own = s.ownRing();
    if (own) ring.set(own);
    else ring.fill(0);
    owner = s;
  }
  // The taps of this stream (another stream may have left its own there).
  new Float64Array(buf(), TAPS, s.g.length).set(s.g);
  // Float32 samples are copied as they are (no conversion in JavaScript) and widened exactly by the kernel;
  // integer samples (a decoder's 8-bit or 16-bit ones, exact in f32) go the same way, as f32.
  const f32 = isExactF32Samples(a) && isExactF32Samples(b);
  const rowsAt = (at: number, n: number) =>
    f32 ? new Float32Array(buf(), at, n) : new Float64Array(buf(), at, n);
  for (let r0 = 0; r0 < rows; r0 += chunk) {
    const n = Math.min(chunk, rows - r0);
    copyRows(rowsAt(aAt, n * width), a, aOff + r0 * width);
    copyRows(rowsAt(bAt, n * width), b, bOff + r0 * width);
    const y = y0 + r0;
    total = k.exports.ssimRows(
      aAt,
      bAt,
      width,
      n,
      y,
      firstWin,
      R,
      TAPS,
      ringAt,
      tmpAt,
      OFFS,
      s.C1,
      s.C2,
      total,
      sums ? sumsAt : 0,
      f32 ? 1 : 0,
      accAt,
    );
    if (sums) {
      const lo = Math.max(y, firstWin);
      const hi = y + n;
      if (hi > lo) sums.set(new Float64Array(buf(), sumsAt + 8 * (lo - y), hi - lo), lo - firstWin);
    }
  }
  return total;
}

/**
 * Where one call's regions lie (byte offsets) for a stream `width` wide whose ring holds `ringLength` values,
 * the rows copied per call (`chunk`), and the bytes the memory needs (`end`).
 */
function callLayout(width: number, ringLength: number) {
  const chunk = Math.max(1, Math.floor(CALL_BYTES / (16 * width)));
  const ringAt = DATA;
  const tmpAt = ringAt + align16(8 * (ringLength + 2));
  const aAt = tmpAt + align16(40 * width);
  const bAt = aAt + align16(8 * chunk * width);
  const sumsAt = bAt + align16(8 * chunk * width);
  // Each row's sum as the kernel's column strips add to it.
  const accAt = sumsAt + align16(8 * chunk);
  return { chunk, ringAt, tmpAt, aAt, bAt, sumsAt, accAt, end: accAt + 8 * chunk };
}

/**
 * Make this thread's kernel ready for SSIM streams `width` wide (window radius R) before they come: compiled,
 * its memory grown to what their calls need, and the grown pages touched (one byte written per 4 KiB page of
 * memory no stream has used yet), so the first call takes no first-touch page faults (about 2 MB on a
 * 3300-wide scan). Nothing changes for a stream: the kernel's memory only holds more touched pages. Returns
 * the pages touched (0 when the kernel is unavailable or its memory was large enough already).
 */
export function readySsimKernel(width: number, R = 5): number {
  const k = kernel.get();
  const wv = width - 2 * R;
  if (!k || wv < 1) return 0;
  const { end } = callLayout(width, (2 * R + 1) * 5 * wv);
  const have = k.memory.buffer.byteLength;
  if (end <= have || !reserveBytes(k, end)) return 0;
  const fresh = new Uint8Array(k.memory.buffer, have);
  let pages = 0;
  for (let i = 0; i < fresh.length; i += 4096, pages++) fresh[i] = 0;
  return pages;
}

function copyRows(dst: Float32Array | Float64Array, src: ArrayLike<number>, from: number): void {
  if (ArrayBuffer.isView(src)) {
    const t = src as unknown as Float64Array;
    dst.set(t.subarray(from, from + dst.length));
  } else for (let i = 0; i < dst.length; i++) dst[i] = src[from + i];
}

/** Whether the SSIM kernel runs (for tests that must exercise it, not the fallback). */
export function ssimKernelActive(): boolean {
  return kernel.get() !== null;
}
