/**
 * Loads the WebAssembly SIMD kernels and owns their linear memory.
 *
 * The module is compiled asynchronously (`initEngine`), because browser main threads refuse large
 * synchronous compiles. Until then, and wherever WebAssembly or SIMD is missing, every numeric
 * function runs the pure-TypeScript fallback with the same results up to rounding.
 */
import { wasmBase64 } from './generated/kernels';

/** C = A·B (+ C when acc is 1) in the kernels' memory; f32 and f64 take the same arguments. */
type GemmKernel = (
  m: number,
  n: number,
  k: number,
  a: number,
  rsA: number,
  csA: number,
  b: number,
  ldb: number,
  c: number,
  ldc: number,
  acc: number,
) => void;

/** The raw kernel exports. Pointers are byte offsets into `memory`. */
export interface KernelExports {
  gemmF32: GemmKernel;
  gemmF64: GemmKernel;
  /** One-sided Jacobi sweeps on contiguous columns; returns sweeps used (maxSweeps + 1: not converged). */
  jacobiF64(
    w: number,
    rows: number,
    n: number,
    vt: number,
    tol: number,
    maxSweeps: number,
    floor2: number,
    norms: number,
  ): number;
  /** Householder tridiagonalisation of a lower-stored symmetric matrix (see symmetric-eigen.ts). */
  tridiagF64(s: number, n: number, d: number, e: number, v: number, p: number, v2: number, p2: number): void;
  /** Symmetric eigen-decomposition with vectors (see symmetric-eigen.ts `symmetricEigen`); 0 or -1 (no convergence). */
  symEigenF64(
    s: number,
    n: number,
    d: number,
    e: number,
    et: number,
    v: number,
    p: number,
    v2: number,
    p2: number,
    betas: number,
    maxIter: number,
  ): number;
  /** Lower Cholesky factor (cholesky.ts `choleskyUpper`, same operation order); 1, or 0 on breakdown. */
  cholLowerF64(g: number, n: number, shift: number, floor: number, l: number): number;
  /** Inverse of an upper-triangular matrix (qr.ts `invertUpper`, same operation order). */
  invUpperF64(r: number, n: number, out: number): void;
}

export interface WasmKernels {
  readonly exports: KernelExports;
  readonly memory: WebAssembly.Memory;
}

/** Bytes in a WebAssembly page. */
const PAGE = 65536;
/** Bytes kept free at the start of memory for the module's own static data (it has none today). */
export const RESERVED_BYTES = PAGE;

let kernels: WasmKernels | null = null;
let pending: Promise<{ wasm: boolean }> | null = null;
let disabled = false;

/**
 * Node's Buffer where the host has one (Node's threads, Electron's main process; not a browser page): found as a
 * global, so the engine imports nothing from Node. Its native decode of the embedded kernels is ~20× cheaper than
 * the loop below, which V8 also compiled with TurboFan in each thread that loads a kernel (~10–20 ms each).
 */
const hostBuffer = (globalThis as { Buffer?: { from(s: string, encoding: 'base64'): Uint8Array } }).Buffer;

/** Decode base64 (RFC 4648 §4) with the host's native decoder where it has one, else {@link decodeBase64Js}. */
export function decodeBase64(s: string): Uint8Array<ArrayBuffer> {
  return hostBuffer ? new Uint8Array(hostBuffer.from(s, 'base64')) : decodeBase64Js(s);
}

/** Decode base64 without atob/Buffer (neither is in ES2022). RFC 4648 §4. */
export function decodeBase64Js(s: string): Uint8Array<ArrayBuffer> {
  const table = new Uint8Array(128);
  const alphabet = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/';
  for (let i = 0; i < 64; i++) table[alphabet.charCodeAt(i)] = i;
  let len = s.length;
  while (len > 0 && s[len - 1] === '=') len--;
  const out = new Uint8Array((len * 3) >> 2);
  let o = 0;
  for (let i = 0; i < len; i += 4) {
    const a = table[s.charCodeAt(i)];
    const b = table[s.charCodeAt(i + 1)];
    const c = i + 2 < len ? table[s.charCodeAt(i + 2)] : 0;
    const d = i + 3 < len ? table[s.charCodeAt(i + 3)] : 0;
    const v = (a << 18) | (b << 12) | (c << 6) | d;
    if (o < out.length) out[o++] = v >> 16;
    if (o < out.length) out[o++] = (v >> 8) & 255;
    if (o < out.length) out[o++] = v & 255;
  }
  return out;
}

/** The kernel module bytes (also used by src-main/node/parallel for its shared-memory twin). */
function kernelBytes(): Uint8Array<ArrayBuffer> {
  return decodeBase64(wasmBase64);
}

/**
 * Compile and instantiate the WebAssembly SIMD kernels. Safe to call many times; resolves to
 * `{ wasm: false }` where WebAssembly SIMD is unavailable, in which case the TS fallback is used.
 * @example const { wasm } = await initEngine();
 */
export function initEngine(): Promise<{ wasm: boolean }> {
  if (kernels) return Promise.resolve({ wasm: !disabled });
  if (!pending)
    pending = (async () => {
      try {
        if (typeof WebAssembly !== 'object') return { wasm: false };
        const module = await WebAssembly.compile(kernelBytes());
        const memory = new WebAssembly.Memory({ initial: 16 });
        const instance = await WebAssembly.instantiate(module, { env: { memory, abort: abortHandler } });
        kernels = { exports: instance.exports as unknown as KernelExports, memory };
        return { wasm: !disabled };
      } catch {
        kernels = null;
        pending = null;
        return { wasm: false };
      }
    })();
  return pending;
}

function abortHandler(): never {
  throw new Error('rankfold engine: WebAssembly kernel aborted');
}

/** The kernels if initialised and not disabled, else null (callers fall back to TypeScript). */
export function activeKernels(): WasmKernels | null {
  return disabled ? null : kernels;
}

/**
 * Force the pure-TypeScript path (true) or allow WebAssembly again (false). For tests that compare
 * the two paths and for diagnosing a suspected kernel fault.
 */
export function setWasmDisabled(value: boolean): void {
  disabled = value;
}

/** Most bytes a 32-bit WebAssembly memory addresses, less a page. */
const MAX_MEMORY_BYTES = 4 * 2 ** 30 - PAGE;

/**
 * Grow `memory` to at least `bytes` bytes, in whole pages (earlier views of its buffer detach; a shared memory's
 * do not). The one grow step behind every kernel memory: this module's, the metrics and codec kernels'
 * (../../metrics/wasm/loader.ts reserveBytes) and the worker pool's shared memory (node/parallel/pool.ts).
 * False, with nothing grown, when `bytes` is over `limit` (4 GiB less a page by default) or the runtime refuses
 * the pages.
 */
export function growMemoryTo(memory: WebAssembly.Memory, bytes: number, limit = MAX_MEMORY_BYTES): boolean {
  const have = memory.buffer.byteLength;
  if (bytes <= have) return true;
  if (bytes > limit) return false;
  try {
    memory.grow(Math.ceil((bytes - have) / PAGE));
    return true;
  } catch {
    return false;
  }
}

/** Make sure the kernels' memory has at least `bytes` bytes; may detach earlier views of its buffer. */
export function ensureMemory(k: WasmKernels, bytes: number): void {
  if (!growMemoryTo(k.memory, bytes))
    throw new RangeError(
      `rankfold engine: needs ${Math.ceil(bytes / 2 ** 20)} MiB of WebAssembly memory, which this runtime cannot give (the limit is 4 GiB)`,
    );
}
