/**
 * Householder QR of a tall m×l block (m ≥ l), thin Q formed explicitly: the fallback of CholeskyQR for
 * rank-deficient or very ill-conditioned blocks (qr.ts) and the preconditioner of the Jacobi SVD.
 *
 * References
 * - G. H. Golub, C. F. Van Loan, "Matrix Computations", 4th ed., Johns Hopkins 2013, §5.2.2
 *   (Householder QR, Algorithm 5.2.1) and §5.1.6 (backward accumulation of Q) — section numbers from memory.
 */
import type { FloatArray } from './matrix';

/**
 * Householder QR in f64: Y (m×l, m ≥ l) ← Q (thin, orthonormal columns); if R is given, R ← R_h·R.
 * Zero columns give unit vectors of the completion, so Q is orthonormal even for Y = 0.
 */
export function householderInPlace(Y: FloatArray, m: number, l: number, R?: Float64Array): void {
  const W = new Float64Array(m * l);
  for (let i = 0; i < m * l; i++) W[i] = Y[i];
  const Rh = householderQr(W, m, l);
  for (let i = 0; i < m * l; i++) Y[i] = W[i];
  if (R) {
    const out = new Float64Array(l * l);
    for (let i = 0; i < l; i++)
      for (let j = i; j < l; j++) {
        let s = 0;
        for (let p = i; p <= j; p++) s += Rh[i * l + p] * R[p * l + j];
        out[i * l + j] = s;
      }
    R.set(out);
  }
}

/**
 * Householder QR of the m×l row-major f64 matrix W (m ≥ l), overwritten by the thin Q; returns R (l×l).
 * Sign convention: diag(R) ≥ 0.
 */
export function householderQr(W: Float64Array, m: number, l: number): Float64Array {
  if (m < l) throw new RangeError(`householderQr needs rows ≥ columns, got ${m}×${l}`);
  // Work on columns (transposed copy) so each reflector touches contiguous memory.
  const C = new Float64Array(l * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < l; j++) C[j * m + i] = W[i * l + j];
  const V = new Float64Array(l * m);
  const beta = new Float64Array(l);
  const R = new Float64Array(l * l);
  for (let j = 0; j < l; j++) {
    const cj = j * m;
    let norm = 0;
    for (let i = j; i < m; i++) norm += C[cj + i] * C[cj + i];
    norm = Math.sqrt(norm);
    const vj = j * m;
    if (norm === 0) {
      beta[j] = 0;
    } else {
      const x0 = C[cj + j];
      const alpha = x0 >= 0 ? -norm : norm;
      for (let i = j; i < m; i++) V[vj + i] = C[cj + i];
      V[vj + j] = x0 - alpha;
      let vv = 0;
      for (let i = j; i < m; i++) vv += V[vj + i] * V[vj + i];
      beta[j] = vv > 0 ? 2 / vv : 0;
      // Apply to the remaining columns.
      for (let c = j; c < l; c++) {
        const cc = c * m;
        let d = 0;
        for (let i = j; i < m; i++) d += V[vj + i] * C[cc + i];
        d *= beta[j];
        if (d !== 0) for (let i = j; i < m; i++) C[cc + i] -= d * V[vj + i];
      }
    }
    for (let i = 0; i <= j; i++) R[i * l + j] = C[cj + i];
  }
  // Form thin Q = H_0 … H_{l-1} [I; 0] column by column (stored in C).
  C.fill(0);
  for (let c = 0; c < l; c++) {
    const cc = c * m;
    C[cc + c] = 1;
    for (let j = Math.min(c, l - 1); j >= 0; j--) {
      if (beta[j] === 0) continue;
      const vj = j * m;
      let d = 0;
      for (let i = j; i < m; i++) d += V[vj + i] * C[cc + i];
      d *= beta[j];
      if (d !== 0) for (let i = j; i < m; i++) C[cc + i] -= d * V[vj + i];
    }
  }
  // Make diag(R) ≥ 0.
  for (let j = 0; j < l; j++) {
    if (R[j * l + j] < 0) {
      for (let c = j; c < l; c++) R[j * l + c] = -R[j * l + c];
      for (let i = 0; i < m; i++) C[j * m + i] = -C[j * m + i];
    }
  }
  for (let i = 0; i < m; i++) for (let j = 0; j < l; j++) W[i * l + j] = C[j * m + i];
  return R;
}
