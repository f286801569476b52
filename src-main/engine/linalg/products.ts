/**
 * Cache-blocked matrix products A·B, Aᵀ·B and A·Bᵀ on row-major views.
 * WebAssembly SIMD (f32x4 / f64x2) once `initEngine` has run, else the TypeScript loop (gemm-ts.ts).
 *
 * References
 * - K. Goto, R. A. van de Geijn, "Anatomy of high-performance matrix multiplication", ACM Trans. Math.
 *   Softw. 34(3), 2008. doi:10.1145/1356052.1356053. §4–5 (register block and cache blocking).
 */
import type { FloatArray, Matrix, Precision } from './matrix';
import { type Backend, bytesFor, copyIn, defaultBackend } from './workspace';

function outPrecision(a: Matrix, b: Matrix, p?: Precision): Precision {
  return p ?? (a.data instanceof Float32Array && b.data instanceof Float32Array ? 'f32' : 'f64');
}

function alloc(p: Precision, n: number): FloatArray {
  return p === 'f32' ? new Float32Array(n) : new Float64Array(n);
}

/** The public product of one kind: precision as {@link outPrecision}, the default backend unless given. */
const product =
  (kind: 'ab' | 'atb' | 'abt') =>
  (a: Matrix, b: Matrix, precision?: Precision, backend: Backend = defaultBackend()): Matrix =>
    run(kind, a, b, precision, backend);

function run(
  kind: 'ab' | 'atb' | 'abt',
  a: Matrix,
  b: Matrix,
  precision: Precision | undefined,
  backend: Backend,
): Matrix {
  const p = outPrecision(a, b, precision);
  const [m, k] = kind === 'atb' ? [a.cols, a.rows] : [a.rows, a.cols];
  const [kb, n] = kind === 'abt' ? [b.cols, b.rows] : [b.rows, b.cols];
  if (k !== kb) throw new RangeError(`matrix product: inner dimensions differ (${k} vs ${kb})`);
  const la = a.rows * a.cols;
  const lb = b.rows * b.cols;
  const ws = backend.workspace(
    p === 'f32' ? bytesFor(la + 2 * lb + m * n, 0) : bytesFor(0, la + 2 * lb + m * n),
  );
  try {
    const A = copyIn(ws, a.data, la, p);
    let B = copyIn(ws, b.data, lb, p);
    if (kind === 'abt') {
      // A·Bᵀ: transpose B (n×k → k×n) once, then the same kernel.
      const T = p === 'f32' ? ws.f32(lb) : ws.f64(lb);
      for (let i = 0; i < n; i++) for (let j = 0; j < k; j++) T[j * n + i] = B[i * k + j];
      B = T;
    }
    const C = p === 'f32' ? ws.f32(m * n) : ws.f64(m * n);
    if (kind === 'atb') ws.gemm(m, n, k, A, 0, 1, a.cols, B, 0, n, C, 0, n, false);
    else ws.gemm(m, n, k, A, 0, a.cols, 1, B, 0, n, C, 0, n, false);
    const out = alloc(p, m * n);
    out.set(C);
    return { rows: m, cols: n, data: out };
  } finally {
    ws.release();
  }
}

/**
 * C = A·B. The result is f32 when both inputs are f32, else f64 (or as `precision` says).
 * @throws RangeError when the inner dimensions differ.
 * @example const C = matmul(A, B);
 */
export const matmul = product('ab');

/** C = Aᵀ·B without forming Aᵀ. @throws RangeError when a.rows ≠ b.rows. */
export const matmulTransA = product('atb');

/** C = A·Bᵀ. @throws RangeError when a.cols ≠ b.cols. */
export const matmulTransB = product('abt');
