/**
 * Eigenvalues of a dense symmetric matrix: Householder tridiagonalisation, then the implicit QL
 * iteration with Wilkinson-type shifts on the tridiagonal matrix (eigenvalues only).
 *
 * References
 * - G. H. Golub, C. F. Van Loan, "Matrix Computations", 4th ed., Johns Hopkins 2013, §8.3.1
 *   (Householder tridiagonalisation, Algorithm 8.3.1) and §8.3.3–8.3.5 (implicit symmetric QR step) —
 *   numbers from memory.
 * - H. Bowdler, R. S. Martin, C. Reinsch, J. H. Wilkinson, "The QR and QL algorithms for symmetric
 *   matrices", Numer. Math. 11:293–306, 1968. doi:10.1007/BF02166681 (procedure tql1; DOI from memory).
 * Accuracy: backward stable; every computed eigenvalue is within a small multiple of n·ε·‖S‖₂ of an
 * exact eigenvalue of S (Weyl's inequality).
 */

import type { Workspace } from './workspace';

/** Machine epsilon of float64. */
const EPS = 2.220446049250313e-16;
/** QL iterations allowed per eigenvalue; 2–3 are typical, 60 is far beyond need. */
const MAX_QL_ITERS = 60;

/**
 * Eigenvalues of the symmetric n×n matrix whose LOWER triangle is stored row-major in `S`
 * (S is overwritten). Returned in no particular order.
 */
export function symmetricEigenvalues(S: Float64Array, n: number): Float64Array {
  const d = new Float64Array(n);
  const e = new Float64Array(Math.max(n - 1, 0));
  tridiagonalize(S, n, d, e);
  return tridiagonalEigenvalues(d, e);
}

/**
 * Householder reduction of the lower-stored symmetric S (n×n row-major, overwritten) to tridiagonal
 * T = (d diagonal, e sub-diagonal), S = Q·T·Qᵀ (Golub & Van Loan §8.3.1). With `Q` (n×n row-major) it
 * also forms Q explicitly, the reflectors (kept in S's spent columns) accumulated backwards
 * (Q = H₀(H₁(…H_{n−3})), GVL §5.1.6 backward accumulation — from memory), 4n³/3 more flops.
 * The reduction's operations are the same with or without Q.
 */
export function tridiagonalize(
  S: Float64Array,
  n: number,
  d: Float64Array,
  e: Float64Array,
  Q?: Float64Array,
): void {
  const beta = new Float64Array(Math.max(n, 1));
  const v = new Float64Array(n);
  const p = new Float64Array(n);
  for (let k = 0; k < n - 2; k++) {
    d[k] = S[k * n + k];
    const k1 = k + 1;
    let scale = 0;
    for (let j = k1; j < n; j++) scale = Math.max(scale, Math.abs(S[j * n + k]));
    if (scale === 0) {
      e[k] = 0;
      for (let j = k1; j < n; j++) S[j * n + k] = 0;
      continue;
    }
    let norm2 = 0;
    for (let j = k1; j < n; j++) {
      const x = S[j * n + k] / scale;
      v[j] = x;
      norm2 += x * x;
    }
    const norm = Math.sqrt(norm2);
    const alpha = v[k1] >= 0 ? -norm : norm;
    e[k] = alpha * scale;
    v[k1] -= alpha;
    let vv = 0;
    for (let j = k1; j < n; j++) vv += v[j] * v[j];
    for (let j = k1; j < n; j++) S[j * n + k] = v[j]; // column k is no longer needed: keep the reflector
    if (vv === 0) continue;
    const b = 2 / vv;
    beta[k] = b;
    p.fill(0, k1, n);
    for (let j = k1; j < n; j++) {
      const row = j * n;
      const vj = v[j];
      let dot = 0;
      for (let i = k1; i < j; i++) {
        const a = S[row + i];
        dot += a * v[i];
        p[i] += a * vj;
      }
      p[j] += dot + S[row + j] * vj;
    }
    let pv = 0;
    for (let j = k1; j < n; j++) {
      p[j] *= b;
      pv += p[j] * v[j];
    }
    const h = 0.5 * b * pv;
    for (let j = k1; j < n; j++) p[j] -= h * v[j];
    for (let j = k1; j < n; j++) {
      const row = j * n;
      const vj = v[j];
      const wj = p[j];
      for (let i = k1; i <= j; i++) S[row + i] -= vj * p[i] + wj * v[i];
    }
  }
  if (n >= 2) {
    d[n - 2] = S[(n - 2) * n + n - 2];
    e[n - 2] = S[(n - 1) * n + n - 2];
  }
  if (n >= 1) d[n - 1] = S[(n - 1) * n + n - 1];
  if (!Q) return;
  // Q = H₀·H₁·…·H_{n−3}, built from the right end: M ← H_k·M touches rows/columns k+1… only.
  Q.fill(0, 0, n * n);
  for (let i = 0; i < n; i++) Q[i * n + i] = 1;
  const w = p;
  for (let k = n - 3; k >= 0; k--) {
    const b = beta[k];
    if (b === 0) continue;
    const k1 = k + 1;
    w.fill(0, k1, n);
    for (let i = k1; i < n; i++) {
      const vi = S[i * n + k];
      if (vi === 0) continue;
      const row = i * n;
      for (let j = k1; j < n; j++) w[j] += vi * Q[row + j];
    }
    for (let i = k1; i < n; i++) {
      const f = b * S[i * n + k];
      if (f === 0) continue;
      const row = i * n;
      for (let j = k1; j < n; j++) Q[row + j] -= f * w[j];
    }
  }
}

/** Eigenvalues of the symmetric tridiagonal matrix (d, e) by implicit QL (tql1). d and e are copied. */
export function tridiagonalEigenvalues(dIn: Float64Array, eIn: Float64Array): Float64Array {
  return tridiagonalQl(dIn, eIn, null, 'tridiagonalEigenvalues');
}

/**
 * Eigenvalues and eigenvectors of the symmetric tridiagonal (d, e) by implicit QL with the rotations
 * accumulated (Bowdler et al. 1968, procedure tql2). `Et` (n×n row-major) holds on entry the
 * TRANSPOSE of the matrix the rotations multiply (Qᵀ from `tridiagonalize`, or I); on exit row i of
 * Et is the eigenvector of eigenvalue i. Rows are contiguous, so each rotation updates two rows.
 * Returns the eigenvalues (in no particular order; row i of Et belongs to value i).
 */
function tridiagonalEigenvectors(dIn: Float64Array, eIn: Float64Array, Et: Float64Array): Float64Array {
  return tridiagonalQl(dIn, eIn, Et, 'tridiagonalEigenvectors');
}

/**
 * Implicit QL on the tridiagonal (d, e), copied: tql1 when `Et` is null, tql2 (rotations applied to the
 * rows of Et) otherwise. The eigenvalue arithmetic is the same either way.
 */
function tridiagonalQl(
  dIn: Float64Array,
  eIn: Float64Array,
  Et: Float64Array | null,
  caller: string,
): Float64Array {
  const n = dIn.length;
  const d = Float64Array.from(dIn);
  const E = new Float64Array(n);
  E.set(eIn.subarray(0, Math.max(0, n - 1)));
  let normT = 0;
  for (let i = 0; i < n; i++)
    normT = Math.max(normT, Math.abs(d[i]) + Math.abs(E[i]) + (i > 0 ? Math.abs(E[i - 1]) : 0));
  // Deflate when |e| ≤ ε·(|d_m|+|d_{m+1}|) (relative, tql1) or |e| ≤ ε·‖T‖ (absolute): the latter changes
  // eigenvalues by ≤ ε‖T‖ (Weyl) and is needed when d ≈ 0 (rank-deficient Gram matrices).
  const absTol = EPS * normT;
  for (let l = 0; l < n; l++) {
    let iter = 0;
    let m: number;
    do {
      for (m = l; m < n - 1; m++) {
        const dd = Math.abs(d[m]) + Math.abs(d[m + 1]);
        if (Math.abs(E[m]) <= EPS * dd || Math.abs(E[m]) <= absTol) break;
      }
      if (m !== l) {
        if (iter++ === MAX_QL_ITERS) throw new Error(`${caller}: QL iteration did not converge`);
        let g = (d[l + 1] - d[l]) / (2 * E[l]);
        let r = Math.hypot(g, 1);
        g = d[m] - d[l] + E[l] / (g + (g >= 0 ? Math.abs(r) : -Math.abs(r)));
        let s = 1;
        let c = 1;
        let p = 0;
        let i: number;
        let early = false;
        for (i = m - 1; i >= l; i--) {
          const f = s * E[i];
          const b = c * E[i];
          r = Math.hypot(f, g);
          E[i + 1] = r;
          if (r === 0) {
            d[i + 1] -= p;
            E[m] = 0;
            early = true;
            break;
          }
          s = f / r;
          c = g / r;
          g = d[i + 1] - p;
          r = (d[i] - g) * s + 2 * c * b;
          p = s * r;
          d[i + 1] = g + p;
          g = c * r - b;
          if (!Et) continue;
          const ri = i * n;
          const rj = ri + n;
          for (let k = 0; k < n; k++) {
            const x = Et[ri + k];
            const y = Et[rj + k];
            Et[rj + k] = s * x + c * y;
            Et[ri + k] = c * x - s * y;
          }
        }
        if (early) continue;
        d[l] -= p;
        E[l] = g;
        E[m] = 0;
      }
    } while (m !== l);
  }
  return d;
}

/**
 * Full symmetric eigen-decomposition S = W·diag(λ)·Wᵀ (lower triangle of S used; S is overwritten).
 * Returns λ non-increasing and Wt (n×n row-major) whose row i is the unit eigenvector of λᵢ.
 * Backward stable: each λ within a small multiple of n·ε·‖S‖₂ (Weyl), each eigenvector's angle
 * error ≲ n·ε·‖S‖₂ / gapᵢ (Davis–Kahan sin θ; GVL §8.1.3 — from memory).
 */
export function symmetricEigen(
  S: Float64Array,
  n: number,
  ws?: Workspace,
): { values: Float64Array; vectorsT: Float64Array } {
  let lam: Float64Array;
  let Et: Float64Array;
  // On a WebAssembly workspace (S from it, 6n + n + n² f64 free) the whole decomposition runs in the kernel.
  const dw = ws?.symEigen ? ws.f64(n) : null;
  const Ew = ws?.symEigen ? ws.f64(n * n) : null;
  if (ws?.symEigen && dw && Ew && ws.symEigen(S, n, dw, Ew)) {
    lam = dw;
    Et = Ew;
  } else {
    const d = new Float64Array(n);
    const e = new Float64Array(Math.max(n - 1, 1));
    const Q = new Float64Array(n * n);
    tridiagonalize(S, n, d, e, Q);
    Et = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) Et[j * n + i] = Q[i * n + j];
    lam = tridiagonalEigenvectors(d, e.subarray(0, Math.max(n - 1, 0)), Et);
  }
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => lam[b] - lam[a] || a - b);
  const values = new Float64Array(n);
  const vectorsT = new Float64Array(n * n);
  for (let r = 0; r < n; r++) {
    values[r] = lam[order[r]];
    vectorsT.set(Et.subarray(order[r] * n, order[r] * n + n), r * n);
  }
  return { values, vectorsT };
}
