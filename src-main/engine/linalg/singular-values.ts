/**
 * All singular values of a matrix (the full spectrum for the spectrum plot and `rankfold inspect`).
 *
 * Route: for a short side ≤ JACOBI_LIMIT, one-sided Jacobi (accurate to ~ε·σᵢ); above it, the
 * eigenvalues of the Gram matrix G = XᵀX (X oriented so that G is short×short), formed in f64 on the
 * product kernel, by Householder tridiagonalisation and implicit QL (symmetric-eigen.ts), σᵢ = √λᵢ.
 *
 * References
 * - G. H. Golub, C. F. Van Loan, "Matrix Computations", 4th ed., Johns Hopkins 2013, §8.6.1 (the SVD
 *   and the symmetric eigenproblem of AᵀA) and §8.1.2 (Weyl: |λᵢ(G+E) − λᵢ(G)| ≤ ‖E‖₂) — from memory.
 * - J. Demmel, K. Veselić, "Jacobi's method is more accurate than QR", SIAM J. Matrix Anal. Appl.
 *   13(4):1204–1245, 1992. doi:10.1137/0613074 (the small-matrix route).
 */
import { jacobiSingularValues, jacobiSvd } from './jacobi-svd';
import type { Matrix, SvdResult } from './matrix';
import { assertFinite } from './randomized-svd';
import { tridiagonalEigenvalues, tridiagonalize } from './symmetric-eigen';
import { type Backend, bytesFor, defaultBackend } from './workspace';

/**
 * Short sides up to this use one-sided Jacobi (≈0.2 s at 256 in TypeScript, and relative accuracy
 * for tiny σ); above it the Gram route, O(mn² + n³) with small constants, is much faster.
 */
export const JACOBI_LIMIT = 256;
/** Row block of the Gram product: only the upper block triangle of G is formed (half the flops). */
const GRAM_BLOCK = 128;

/**
 * All min(m,n) singular values of A, non-increasing, as Float64Array (input f32 or f64).
 *
 * Accuracy. Short side ≤ 256: one-sided Jacobi, each σᵢ to a few ε relative (ε = 2.2e-16) for
 * well-scaled matrices. Larger: Gram-matrix route, which squares the condition number. G is formed
 * in f64 from exactly converted samples, so the computed eigenvalues satisfy |λ̂ᵢ − σᵢ²| ≲ c·n·ε·σ₁²
 * (Weyl), i.e. an absolute error in σᵢ of about c·n·ε·σ₁²/(2σᵢ): for σᵢ ≥ 1e-4·σ₁ and n ≤ 2048 this is
 * ≲ 1e-8·σ₁ — far inside the 1e-4·σ₁ needed for spectra — but σᵢ below ~√(nε)·σ₁ ≈ 1e-6·σ₁ carry no
 * correct digits (they come back as ≈0 or ~1e-6·σ₁ instead). Use `jacobiSvd` where tiny σ matter.
 * Cost at 2048×2048: a few seconds (Gram product and tridiagonalisation on WebAssembly SIMD).
 * @throws RangeError if A has NaN or infinite entries.
 * @example const s = singularValues(plane); // s[0] ≥ s[1] ≥ …
 */
export function singularValues(a: Matrix, backend: Backend = defaultBackend()): Float64Array {
  const m = a.rows;
  const n = a.cols;
  const r = Math.min(m, n);
  if (r === 0) return new Float64Array(0);
  assertFinite(a);
  if (r <= JACOBI_LIMIT) return jacobiSingularValues(a);
  const long = Math.max(m, n);
  const ws = backend.workspace(bytesFor(0, long * r + r * r + 6 * r + 2));
  let lambda: Float64Array;
  try {
    // X is long×short row-major: A itself if m ≥ n, else Aᵀ.
    const X = ws.f64(long * r);
    if (m >= n) for (let i = 0; i < m * n; i++) X[i] = a.data[i];
    else for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) X[j * m + i] = a.data[i * n + j];
    const G = ws.f64(r * r);
    // Upper block triangle: G[i0:i1, i0:] = X[:, i0:i1]ᵀ·X[:, i0:], then mirrored into the lower triangle.
    for (let i0 = 0; i0 < r; i0 += GRAM_BLOCK) {
      const ni = Math.min(GRAM_BLOCK, r - i0);
      ws.gemm(ni, r - i0, long, X, i0, 1, r, X, i0, r, G, i0 * r + i0, r, false);
    }
    for (let i = 1; i < r; i++) for (let j = 0; j < i; j++) G[i * r + j] = G[j * r + i];
    const d = ws.f64(r);
    const e = ws.f64(Math.max(r - 1, 1));
    const v = ws.f64(2 * r);
    const p = ws.f64(2 * r);
    if (!ws.tridiag?.(G, r, d, e, v, p)) tridiagonalize(G, r, d, e);
    lambda = tridiagonalEigenvalues(d, e.subarray(0, Math.max(r - 1, 0)));
  } finally {
    ws.release();
  }
  const s = new Float64Array(r);
  for (let i = 0; i < r; i++) s[i] = Math.sqrt(Math.max(lambda[i], 0));
  s.sort().reverse();
  return s;
}

/**
 * Full thin SVD (all min(m,n) triplets) by one-sided Jacobi, with a QR first for tall inputs.
 * Accurate (see `jacobiSvd`) and practical up to a few hundred on the short side (O(n³) per sweep).
 */
export function fullSvd(a: Matrix): SvdResult {
  assertFinite(a);
  return jacobiSvd(a);
}
