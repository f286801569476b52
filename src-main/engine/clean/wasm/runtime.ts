/**
 * Loads the patch-group denoiser's WebAssembly SIMD kernels (clean/wasm/assembly/groups.ts) and owns their
 * linear memory, one instance per thread. The module is small and only Node reaches the denoiser (the
 * CLI, the services and the clean workers; the page never runs it), so it is compiled synchronously on
 * first use. Where WebAssembly SIMD is missing the callers keep their TypeScript path, which gives
 * bit-identical results (the kernels perform the same f64 operations in the same order).
 */
import { decodeBase64 } from '../../linalg/wasm/runtime';
import { wasmBase64 } from './generated/groups';

/** The raw kernel exports. Pointers are byte offsets into `memory`. */
interface GroupKernelExports {
  /** block-matching.ts `matchGroup` on an f64 copy of the guide; returns the count, the heap holds the result. */
  matchGroupF64(
    guide: number,
    width: number,
    height: number,
    p: number,
    K: number,
    offsets: number,
    nOff: number,
    y: number,
    x: number,
    heapD: number,
    heapI: number,
    ref: number,
  ): number;
  /** The same for a guide of small integers stored as i16 (patches up to 8×8). */
  matchGroupI16: GroupKernelExports['matchGroupF64'];
  /** wiener-groups.ts `GroupWiener.estimate` for a group of n = 2, 4, 8, … patches; returns Σw². */
  wienerGroupF64(
    yn: number,
    yb: number,
    out: number,
    p: number,
    n: number,
    s2: number,
    Cp: number,
    t: number,
    h: number,
  ): number;
  /** The same with a noise spectrum (m relative variances at `spec`, those of the group average at `average`); returns Σw²·d. */
  wienerGroupSpectrumF64(
    ...args: [...Parameters<GroupKernelExports['wienerGroupF64']>, spec: number, average: number]
  ): number;
  /** whiten-patches.ts `PatchWhitener` forward or inverse, in place on m × n f64 at X (n even). */
  whitenF64(X: number, p: number, n: number, Cp: number, scale: number, t: number, inverse: boolean): void;
}

export interface GroupKernels {
  readonly exports: GroupKernelExports;
  readonly memory: WebAssembly.Memory;
}

/** Bytes in a WebAssembly page. */
const PAGE = 65536;
/** Largest memory a 32-bit WebAssembly instance can address, less one page. */
const MAX_BYTES = 2 ** 32 - PAGE;
/** Bytes left free at the start of memory (the module has no static data today; kept as linalg does). */
const RESERVED = PAGE;
/**
 * Bytes of the fixed scratch region of the Wiener pass, right after the reserved page: four m×n f64
 * blocks, one row of n, the p×p DCT and 2·m noise variances for patches up to 12×12 and groups up to 96 (the
 * options' limits) need 4·144·96·8 + 96·8 + 3·144·8 bytes, under 0.5 MiB.
 */
export const WIENER_SCRATCH_BYTES = 512 * 1024;
/** Start of the Wiener scratch region. */
export const WIENER_BASE = RESERVED;
/**
 * Bytes of the whitening region (whiten-patches.ts), after the Wiener region: two m×n f64 blocks, the p×p DCT
 * and m scale factors need 2·144·96·8 + 2·144·8 bytes for the options' limits, under 256 KiB.
 */
export const WHITEN_SCRATCH_BYTES = 256 * 1024;
/** Start of the whitening region. */
export const WHITEN_BASE = WIENER_BASE + WIENER_SCRATCH_BYTES;
/** Where the block-matching region (guide rows, offsets, heap) starts. */
export const MATCH_BASE = WHITEN_BASE + WHITEN_SCRATCH_BYTES;

let loaded: GroupKernels | null | undefined;
let disabled = false;

/** The kernels of this thread, compiled on first use; null where WebAssembly SIMD is missing or disabled. */
export function groupKernels(): GroupKernels | null {
  if (disabled) return null;
  if (loaded === undefined) {
    try {
      const memory = new WebAssembly.Memory({ initial: MATCH_BASE / PAGE });
      const module = new WebAssembly.Module(decodeBase64(wasmBase64));
      const instance = new WebAssembly.Instance(module, { env: { memory } });
      loaded = { exports: instance.exports as unknown as GroupKernelExports, memory };
    } catch {
      loaded = null;
    }
  }
  return loaded;
}

/**
 * Force the TypeScript path (true) or allow the kernels again (false): for the tests that compare the
 * two paths bit for bit, and for diagnosing a suspected kernel fault.
 */
export function setGroupKernelsDisabled(value: boolean): void {
  disabled = value;
}

/** Make sure memory holds at least `bytes` bytes; growing detaches earlier views of its buffer. */
export function ensureGroupMemory(k: GroupKernels, bytes: number): void {
  const pages = Math.ceil((bytes - k.memory.buffer.byteLength) / PAGE);
  if (pages <= 0) return;
  if (bytes > MAX_BYTES)
    throw new RangeError(
      `rankfold clean: block matching needs ${Math.ceil(bytes / 2 ** 20)} MiB of WebAssembly memory (limit 4 GiB); pass --workers 2 or more to split the image into smaller bands`,
    );
  k.memory.grow(pages);
}
