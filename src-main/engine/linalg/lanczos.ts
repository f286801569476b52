/**
 * Golub–Kahan–Lanczos bidiagonalisation of a small dense matrix with full re-orthogonalisation, and a
 * Sturm-sequence count of the Ritz values, for the leading singular triplets of a patch group (clean/).
 * After k steps, Uᵀ·Y = B̃·Ṽᵀ with B̃ = [B_k, β_k e_k] (B_k upper bidiagonal: α on the diagonal, β above),
 * so the Gram T = B̃B̃ᵀ is tridiagonal: diagonal α_i² + β_i², off-diagonal β_{i−1}·α_i. Its eigenvalues
 * (the Ritz values, squared) converge to the largest σ² of Y first.
 *
 * References
 * - G. H. Golub, W. Kahan, "Calculating the singular values and pseudo-inverse of a matrix", J. SIAM
 *   Numer. Anal. 2(2):205–224, 1965. doi:10.1137/0702016 (the bidiagonalisation; DOI from memory).
 * - G. H. Golub, C. F. Van Loan, "Matrix Computations", 4th ed., Johns Hopkins 2013, §10.4 (Lanczos
 *   bidiagonalisation, full re-orthogonalisation) and §8.4.1 (Sturm sequence / LDLᵀ inertia count) —
 *   section numbers from memory.
 */
import { lcg32 } from './random';

/** Arrays one bidiagonalisation writes; sized for at most `kmax` steps of an m×n matrix. */
export interface LanczosArrays {
  /** (kmax+1)·m: left vectors u_j, one per row. */
  U: Float64Array;
  /** (kmax+2)·n: right vectors v_j, one per row (v_{k+1} included). */
  V: Float64Array;
  /** kmax+1: diagonal of B. */
  alpha: Float64Array;
  /** kmax+1: super-diagonal of B (β_j couples u_j and v_{j+1}). */
  beta: Float64Array;
  /** max(m, n) scratch. */
  tmp: Float64Array;
}

/**
 * Fixed start vector v₁ (before normalisation): the Numerical Recipes LCG from 0x9e3779b9, each state
 * scaled to [−0.5, 0.5). Any generic vector works; a fixed one keeps results reproducible.
 */
export function lanczosStartVector(n: number): Float64Array {
  const v = new Float64Array(n);
  const next = lcg32(0x9e3779b9);
  for (let i = 0; i < n; i++) v[i] = next() / 4294967296 - 0.5;
  return v;
}

/**
 * Up to `kmax` bidiagonalisation steps of Y (m×n row-major, stride n) from `start`; a step whose α is
 * ≤ `tiny` ends the process (invariant subspace), a β ≤ `tiny` ends it after that step (v_{j+1} = 0).
 * `stop(steps)` is asked after every complete step. Returns the number of steps taken (α, β, U, V valid
 * up to it).
 */
export function lanczosBidiagonalize(
  Y: Float64Array,
  m: number,
  n: number,
  kmax: number,
  start: Float64Array,
  tiny: number,
  arrays: LanczosArrays,
  stop: (steps: number) => boolean,
): number {
  const { U, V, alpha, beta, tmp } = arrays;
  // v1 = start / ‖start‖
  let nv = 0;
  for (let k = 0; k < n; k++) nv += start[k] * start[k];
  nv = 1 / Math.sqrt(nv);
  for (let k = 0; k < n; k++) V[k] = start[k] * nv;
  let steps = 0;
  for (let j = 0; j < kmax; j++) {
    // u_j = Y v_j − β_{j−1} u_{j−1}, re-orthogonalised against all previous u.
    const uj = j * m;
    const vj = j * n;
    for (let i = 0; i < m; i++) {
      let s = 0;
      const row = i * n;
      for (let k = 0; k < n; k++) s += Y[row + k] * V[vj + k];
      tmp[i] = s;
    }
    const a = orthogonalNorm(U, j, tmp, m);
    if (a <= tiny) break;
    alpha[j] = a;
    for (let i = 0; i < m; i++) U[uj + i] = tmp[i] / a;
    steps = j + 1;
    // v_{j+1} = Yᵀ u_j − α_j v_j, re-orthogonalised against all previous v.
    const vn = (j + 1) * n;
    for (let k = 0; k < n; k++) tmp[k] = 0;
    for (let i = 0; i < m; i++) {
      const ui = U[uj + i];
      const row = i * n;
      for (let k = 0; k < n; k++) tmp[k] += Y[row + k] * ui;
    }
    const b = orthogonalNorm(V, j + 1, tmp, n);
    beta[j] = b;
    if (b <= tiny) {
      for (let k = 0; k < n; k++) V[vn + k] = 0;
      break;
    }
    for (let k = 0; k < n; k++) V[vn + k] = tmp[k] / b;
    if (stop(steps)) break;
  }
  return steps;
}

/** The tridiagonal Gram T = B̃B̃ᵀ of k steps: d[i] = α_i² + β_i², e[i] = β_{i−1}·α_i (e[0] = 0). */
export function lanczosGram(
  alpha: Float64Array,
  beta: Float64Array,
  k: number,
  d: Float64Array,
  e: Float64Array,
) {
  for (let i = 0; i < k; i++) {
    d[i] = alpha[i] * alpha[i] + beta[i] * beta[i];
    e[i] = i > 0 ? beta[i - 1] * alpha[i] : 0;
  }
}

/**
 * Number of eigenvalues above x of the Lanczos Gram T = B̃B̃ᵀ of k steps, by a Sturm sequence count
 * (the signs of the LDLᵀ pivots of T − x·I; GVL §8.4.1).
 */
export function ritzAbove(alpha: Float64Array, beta: Float64Array, k: number, x: number): number {
  let below = 0;
  let q = 1;
  for (let i = 0; i < k; i++) {
    const a = alpha[i] * alpha[i] + beta[i] * beta[i] - x;
    const off = i > 0 ? beta[i - 1] * alpha[i] : 0;
    q = i > 0 ? a - (off * off) / q : a;
    if (q === 0) q = -1e-300;
    if (q < 0) below++;
  }
  return k - below;
}

/**
 * Take out of tmp[0…len) its part along each of the first `count` vectors of B (length `len`, stored one
 * after another; classical Gram–Schmidt, one pass) and return the norm of what is left.
 */
function orthogonalNorm(B: Float64Array, count: number, tmp: Float64Array, len: number): number {
  for (let q = 0; q < count; q++) {
    let d = 0;
    for (let i = 0; i < len; i++) d += B[q * len + i] * tmp[i];
    for (let i = 0; i < len; i++) tmp[i] -= d * B[q * len + i];
  }
  let norm2 = 0;
  for (let i = 0; i < len; i++) norm2 += tmp[i] * tmp[i];
  return Math.sqrt(norm2);
}
