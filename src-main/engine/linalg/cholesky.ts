/**
 * Cholesky factorisation of symmetric positive definite matrices, in two variants kept apart because
 * output bytes depend on their exact operation order: the row-oriented upper factor with a breakdown
 * floor used by CholeskyQR (qr.ts; its WebAssembly twin is kernels.ts `choleskyLower`), and a ridged
 * column-oriented solve used by the stack codec's least-squares refits.
 *
 * References
 * - G. H. Golub, C. F. Van Loan, "Matrix Computations", 4th ed., Johns Hopkins 2013, §4.2 (Cholesky,
 *   Algorithm 4.2.1 gaxpy form and the row-oriented variant) and §3.1 (triangular solves) — section
 *   numbers from memory.
 * - N. J. Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., SIAM 2002, Theorem 10.3
 *   (Cholesky succeeds when 20·n^{3/2}·u·κ₂(A) < 1, the reason for the breakdown floor) — from memory.
 */
import type { Workspace } from './workspace';

/**
 * Upper Cholesky factor of (G + shift·I) into Rc; false on breakdown. A pivot below
 * `BREAKDOWN·u·max diag` counts as breakdown: it means κ(Y)² exceeds what precision u can represent.
 */
export function choleskyUpper(
  G: Float64Array,
  l: number,
  shift: number,
  Rc: Float64Array,
  u: number,
  ws?: Workspace,
): boolean {
  let maxDiag = 0;
  for (let i = 0; i < l; i++) maxDiag = Math.max(maxDiag, G[i * l + i] + shift);
  if (!(maxDiag > 0)) return false;
  const floor = l * u * maxDiag;
  // Lower factor L (G + shift·I = L·Lᵀ) computed row by row so every inner product runs over
  // contiguous memory; Rc = Lᵀ at the end. Rc is used as L's storage first.
  const L = Rc;
  const fast = ws?.choleskyLower?.(G, l, shift, floor, L) ?? -1;
  if (fast === 0) return false;
  if (fast < 0) L.fill(0);
  for (let i = 0; i < l && fast < 0; i++) {
    const ri = i * l;
    for (let j = 0; j <= i; j++) {
      const rj = j * l;
      let sum = 0.5 * (G[ri + j] + G[rj + i]) + (i === j ? shift : 0);
      for (let p = 0; p < j; p++) sum -= L[ri + p] * L[rj + p];
      if (i === j) {
        if (!(sum > floor)) return false;
        L[ri + i] = Math.sqrt(sum);
      } else L[ri + j] = sum / L[rj + j];
    }
  }
  // In-place transpose: Rc = Lᵀ (upper).
  for (let i = 0; i < l; i++)
    for (let j = 0; j < i; j++) {
      Rc[j * l + i] = L[i * l + j];
      Rc[i * l + j] = 0;
    }
  return true;
}

/**
 * Solve the SPD system A·x = b (m×m row-major, A untouched) by a lower Cholesky factor computed column
 * by column (GVL Algorithm 4.2.1, gaxpy form), with a tiny ridge 1e-13·mean(diag A) + 1e-300 added to the
 * diagonal and used as the pivot floor, so rank-deficient bases (the codec's least-squares refits) still
 * give a finite answer. Then forward and back substitution (GVL §3.1).
 * A separate variant from {@link choleskyUpper}: different loop order and no symmetrisation, and the stack
 * codec's coefficient bytes are fixed by this operation order.
 */
export function solveSpdRidge(A: Float64Array, b: Float64Array, m: number): Float64Array {
  const L = Float64Array.from(A);
  let tr = 0;
  for (let i = 0; i < m; i++) tr += A[i * m + i];
  const ridge = 1e-13 * (tr / Math.max(1, m)) + 1e-300;
  for (let j = 0; j < m; j++) {
    let d = L[j * m + j] + ridge;
    for (let k = 0; k < j; k++) d -= L[j * m + k] ** 2;
    d = Math.sqrt(Math.max(d, ridge));
    L[j * m + j] = d;
    for (let i = j + 1; i < m; i++) {
      let s = L[i * m + j];
      for (let k = 0; k < j; k++) s -= L[i * m + k] * L[j * m + k];
      L[i * m + j] = s / d;
    }
  }
  const y = new Float64Array(m);
  for (let i = 0; i < m; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= L[i * m + k] * y[k];
    y[i] = s / L[i * m + i];
  }
  const x = new Float64Array(m);
  for (let i = m - 1; i >= 0; i--) {
    let s = y[i];
    for (let k = i + 1; k < m; k++) s -= L[k * m + i] * x[k];
    x[i] = s / L[i * m + i];
  }
  return x;
}
