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

/** Householder reduction of the lower-stored symmetric S to tridiagonal (d diagonal, e sub-diagonal). */
export function tridiagonalize(S: Float64Array, n: number, d: Float64Array, e: Float64Array): void {
  const v = new Float64Array(n);
  const p = new Float64Array(n);
  for (let k = 0; k < n - 2; k++) {
    d[k] = S[k * n + k];
    const k1 = k + 1;
    let scale = 0;
    for (let j = k1; j < n; j++) scale = Math.max(scale, Math.abs(S[j * n + k]));
    if (scale === 0) {
      e[k] = 0;
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
    if (vv === 0) continue;
    const beta = 2 / vv;
    // p = β·S₂₂·v, S₂₂ lower-stored: row j contributes to p[j] (dot) and p[k1..j-1] (axpy).
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
      p[j] *= beta;
      pv += p[j] * v[j];
    }
    const h = 0.5 * beta * pv;
    for (let j = k1; j < n; j++) p[j] -= h * v[j]; // p is now w
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
}

/** Eigenvalues of the symmetric tridiagonal matrix (d, e) by implicit QL (tql1). d and e are copied. */
export function tridiagonalEigenvalues(dIn: Float64Array, eIn: Float64Array): Float64Array {
  const n = dIn.length;
  const d = Float64Array.from(dIn);
  const E = new Float64Array(n);
  E.set(eIn.subarray(0, Math.max(0, n - 1)));
  // Deflate when |e| ≤ ε·(|d_m|+|d_{m+1}|) (relative, tql1) or |e| ≤ ε·‖T‖ (absolute): the latter changes
  // eigenvalues by ≤ ε‖T‖ (Weyl) and is needed when d ≈ 0 (rank-deficient Gram matrices).
  let normT = 0;
  for (let i = 0; i < n; i++)
    normT = Math.max(normT, Math.abs(d[i]) + Math.abs(E[i]) + (i > 0 ? Math.abs(E[i - 1]) : 0));
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
        if (iter++ === MAX_QL_ITERS) throw new Error('tridiagonalEigenvalues: QL iteration did not converge');
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
