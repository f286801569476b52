/**
 * Workspaces: where the engine's algorithms allocate their arrays and run their products.
 *
 * An algorithm asks a backend for one workspace sized for the whole computation, allocates its
 * Float32Array / Float64Array buffers from it, and calls `gemm` on them. The WebAssembly backend
 * hands out views of the kernels' linear memory so `gemm` runs the SIMD kernel on them in place; the
 * TypeScript backend hands out ordinary arrays and runs the blocked TS loop. src-main/node/parallel
 * implements the same interface (backend.ts) over a shared memory and two worker threads.
 */
import type { Backend, Gemm, Workspace } from './backend';
import { gemmTs } from './gemm-ts';
import type { FloatArray } from './matrix';
import {
  activeKernels,
  ensureMemory,
  type KernelExports,
  RESERVED_BYTES,
  type WasmKernels,
} from './wasm/runtime';

export type { Backend, Gemm, Workspace };

/** QL iterations allowed per eigenvalue in the WebAssembly eigensolver (as symmetric-eigen.ts). */
const MAX_QL_ITERS_WASM = 60;
/** Every allocation starts on a 16-byte boundary (one v128). */
const ALIGN = 16;

/** Bytes between writes when touching fresh memory (the smallest common page size). */
const TOUCH_STRIDE = 4096;

/** Grow `memory` to `start + bytes` (within its limit) and write a zero into every page from `start`. */
export function touchMemory(
  memory: WebAssembly.Memory,
  start: number,
  bytes: number,
  grow: (end: number) => void,
): void {
  grow(start + bytes);
  const view = new Uint8Array(memory.buffer, start, bytes);
  for (let i = 0; i < bytes; i += TOUCH_STRIDE) view[i] = 0;
}

/** Bytes needed for arrays of these element counts, with alignment slack. */
export function bytesFor(f32Elements: number, f64Elements: number, arrays = 64): number {
  return 4 * f32Elements + 8 * f64Elements + ALIGN * arrays;
}

class TsWorkspace implements Workspace {
  readonly label = 'ts';
  f32(n: number) {
    return new Float32Array(n);
  }
  f64(n: number) {
    return new Float64Array(n);
  }
  gemm: Gemm = gemmTs;
  release() {}
}

/** The pure-TypeScript backend. */
export const tsBackend: Backend = { label: 'ts', workspace: () => new TsWorkspace() };

/** The optional Workspace members that the WebAssembly kernels implement. */
export type KernelOps = Required<
  Pick<Workspace, 'jacobi' | 'tridiag' | 'symEigen' | 'choleskyLower' | 'invertUpper'>
>;

/**
 * The optional kernels of a workspace over WebAssembly memory: each runs the kernel in place when
 * `inMemory` accepts every array it is given (else returns its "cannot run" value, and the caller uses
 * TS). `f64` allocates symEigen's scratch from the same workspace. Shared by the wasm backend below and
 * by src-main/node/parallel's pool, so both make the same kernel calls: equal results.
 */
export function kernelOps(
  exports: KernelExports,
  inMemory: (x: FloatArray) => boolean,
  f64: (n: number) => Float64Array,
): KernelOps {
  return {
    jacobi: (W, rows, n, Vt, tol, maxSweeps, floor2, norms) => {
      if (!inMemory(W) || (Vt && !inMemory(Vt)) || !inMemory(norms)) return -1;
      return exports.jacobiF64(
        W.byteOffset,
        rows,
        n,
        Vt ? Vt.byteOffset : 0,
        tol,
        maxSweeps,
        floor2,
        norms.byteOffset,
      );
    },
    tridiag: (S, n, d, e, v, p) => {
      if (![S, d, e, v, p].every(inMemory) || v.length < 2 * n || p.length < 2 * n) return false;
      exports.tridiagF64(
        S.byteOffset,
        n,
        d.byteOffset,
        e.byteOffset,
        v.byteOffset,
        p.byteOffset,
        v.byteOffset + 8 * n,
        p.byteOffset + 8 * n,
      );
      return true;
    },
    symEigen: (S, n, d, Et) => {
      if (![S, d, Et].every(inMemory)) return false;
      const [e, v, p, v2, p2, betas] = [n, 2 * n, 2 * n, n, n, n].map(f64);
      const rc = exports.symEigenF64(
        S.byteOffset,
        n,
        d.byteOffset,
        e.byteOffset,
        Et.byteOffset,
        v.byteOffset,
        p.byteOffset,
        v2.byteOffset,
        p2.byteOffset,
        betas.byteOffset,
        MAX_QL_ITERS_WASM,
      );
      if (rc !== 0) throw new Error('symmetricEigen: QL iteration did not converge');
      return true;
    },
    choleskyLower: (G, l, shift, floor, L) =>
      inMemory(G) && inMemory(L) ? exports.cholLowerF64(G.byteOffset, l, shift, floor, L.byteOffset) : -1,
    invertUpper: (R, l, out) => {
      if (!inMemory(R) || !inMemory(out)) return false;
      exports.invUpperF64(R.byteOffset, l, out.byteOffset);
      return true;
    },
  };
}

let wasmBusy = false;

/** A workspace over the engine's own kernel memory (allocations bump a pointer from RESERVED_BYTES). */
function wasmWorkspace(kernels: WasmKernels, bytes: number): Workspace {
  const end = RESERVED_BYTES + bytes;
  ensureMemory(kernels, end);
  let top = RESERVED_BYTES;
  const take = (size: number): number => {
    const p = top;
    const next = p + Math.ceil(size / ALIGN) * ALIGN;
    if (next > end)
      throw new RangeError(`rankfold engine: workspace overflow (${next} > ${end} bytes); this is a bug`);
    top = next;
    return p;
  };
  const f64 = (n: number) => new Float64Array(kernels.memory.buffer, take(8 * n), n);
  const gemm: Gemm = (m, n, k, a, aOff, rsA, csA, b, bOff, ldb, c, cOff, ldc, accumulate) => {
    const buf = kernels.memory.buffer;
    if (a.buffer !== buf || b.buffer !== buf || c.buffer !== buf || m === 0 || n === 0) {
      gemmTs(m, n, k, a, aOff, rsA, csA, b, bOff, ldb, c, cOff, ldc, accumulate);
      return;
    }
    const bpe = a instanceof Float32Array ? 4 : 8;
    const kernel = bpe === 4 ? kernels.exports.gemmF32 : kernels.exports.gemmF64;
    kernel(
      m,
      n,
      k,
      a.byteOffset + bpe * aOff,
      rsA,
      csA,
      b.byteOffset + bpe * bOff,
      ldb,
      c.byteOffset + bpe * cOff,
      ldc,
      accumulate ? 1 : 0,
    );
  };
  return {
    label: 'wasm',
    f32: (n) => new Float32Array(kernels.memory.buffer, take(4 * n), n),
    f64,
    gemm,
    mark: () => top,
    reset: (at) => {
      top = Math.min(top, at);
    },
    ...kernelOps(kernels.exports, (x) => x.buffer === kernels.memory.buffer, f64),
    release: () => {
      wasmBusy = false;
    },
  };
}

/** The WebAssembly backend over the engine's own kernels; null before `initEngine` or when disabled. */
export function wasmBackend(): Backend | null {
  const k = activeKernels();
  if (!k) return null;
  return {
    label: 'wasm',
    reserve: (bytes) => {
      if (!wasmBusy) touchMemory(k.memory, RESERVED_BYTES, bytes, (end) => ensureMemory(k, end));
    },
    workspace: (bytes) => {
      // One computation at a time owns the linear memory (JS is single-threaded; nesting is a bug).
      if (wasmBusy) return new TsWorkspace();
      wasmBusy = true;
      try {
        return wasmWorkspace(k, bytes);
      } catch (err) {
        wasmBusy = false;
        throw err;
      }
    },
  };
}

/** The backend numeric functions use by default: WebAssembly once initialised, else TypeScript. */
export function defaultBackend(): Backend {
  return wasmBackend() ?? tsBackend;
}

/** Copy a matrix's data into a workspace array of the given precision. */
export function copyIn(ws: Workspace, data: FloatArray, len: number, precision: 'f32' | 'f64'): FloatArray {
  const out = precision === 'f32' ? ws.f32(len) : ws.f64(len);
  if (data.length === len) out.set(data);
  else out.set(data.subarray(0, len));
  return out;
}
