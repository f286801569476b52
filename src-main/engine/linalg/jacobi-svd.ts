/**
 * One-sided Jacobi SVD (Hestenes), for small and medium matrices such as tiles and patch groups.
 *
 * References
 * - J. Demmel, K. Veselić, "Jacobi's method is more accurate than QR", SIAM J. Matrix Anal. Appl.
 *   13(4):1204–1245, 1992. doi:10.1137/0613074. §4, one-sided Jacobi on columns.
 * - M. R. Hestenes, "Inversion of matrices by biorthogonalization and related results",
 *   J. SIAM 6(1):51–90, 1958. doi:10.1137/0106005.
 */
import { type Matrix, type SvdResult, transpose } from './matrix';

/** Machine epsilon of float64. */
const EPS = 2.220446049250313e-16;
/** Sweeps before giving up; one-sided Jacobi converges quadratically, so 60 is far beyond need. */
const MAX_SWEEPS = 60;

/**
 * Full thin SVD of an m×n matrix by one-sided Jacobi in float64.
 * Returns min(m,n) singular triplets with s non-increasing. U is m×r, V is n×r, r = min(m,n).
 * @example const { s, U, V } = jacobiSvd(fromRows([[3, 0], [4, 5]]));
 */
export function jacobiSvd(a: Matrix): SvdResult {
  if (a.rows < a.cols) {
    const t = jacobiSvd(transpose(a));
    return { s: t.s, U: t.V, V: t.U };
  }
  const m = a.rows;
  const n = a.cols;
  // Work on columns: store Aᵀ row-major so each column of A is contiguous.
  const W = new Float64Array(n * m);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) W[j * m + i] = a.data[i * n + j];
  const V = new Float64Array(n * n);
  for (let j = 0; j < n; j++) V[j * n + j] = 1;
  const tol = EPS * m;
  for (let sweep = 0; sweep < MAX_SWEEPS; sweep++) {
    let rotated = false;
    for (let p = 0; p < n - 1; p++) {
      const po = p * m;
      for (let q = p + 1; q < n; q++) {
        const qo = q * m;
        let alpha = 0;
        let beta = 0;
        let gamma = 0;
        for (let i = 0; i < m; i++) {
          const x = W[po + i];
          const y = W[qo + i];
          alpha += x * x;
          beta += y * y;
          gamma += x * y;
        }
        if (gamma === 0 || Math.abs(gamma) <= tol * Math.sqrt(alpha * beta)) continue;
        rotated = true;
        const zeta = (beta - alpha) / (2 * gamma);
        const t = Math.sign(zeta || 1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
        const c = 1 / Math.sqrt(1 + t * t);
        const s = c * t;
        for (let i = 0; i < m; i++) {
          const x = W[po + i];
          const y = W[qo + i];
          W[po + i] = c * x - s * y;
          W[qo + i] = s * x + c * y;
        }
        for (let i = 0; i < n; i++) {
          const x = V[i * n + p];
          const y = V[i * n + q];
          V[i * n + p] = c * x - s * y;
          V[i * n + q] = s * x + c * y;
        }
      }
    }
    if (!rotated) break;
  }
  const norms = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let i = 0; i < m; i++) s += W[j * m + i] * W[j * m + i];
    norms[j] = Math.sqrt(s);
  }
  const order = Array.from({ length: n }, (_, j) => j).sort((x, y) => norms[y] - norms[x]);
  const s = new Float64Array(n);
  const U = new Float64Array(m * n);
  const Vout = new Float64Array(n * n);
  const sigmaMax = norms[order[0]] ?? 0;
  for (let k = 0; k < n; k++) {
    const j = order[k];
    s[k] = norms[j];
    const inv = norms[j] > sigmaMax * EPS * m && norms[j] > 0 ? 1 / norms[j] : 0;
    for (let i = 0; i < m; i++) U[i * n + k] = W[j * m + i] * inv;
    for (let i = 0; i < n; i++) Vout[i * n + k] = V[i * n + j];
  }
  completeOrthonormal(U, m, n, s, sigmaMax * EPS * m);
  return { s, U: { rows: m, cols: n, data: U }, V: { rows: n, cols: n, data: Vout } };
}

/** Replace zero columns of U (from zero singular values) by an orthonormal completion. */
function completeOrthonormal(U: Float64Array, m: number, n: number, s: Float64Array, tiny: number) {
  for (let k = 0; k < n; k++) {
    if (s[k] > tiny && s[k] > 0) continue;
    for (let e = 0; e < m; e++) {
      const v = new Float64Array(m);
      v[e] = 1;
      for (let pass = 0; pass < 2; pass++)
        for (let j = 0; j < n; j++) {
          if (j === k) continue;
          if (j > k && !(s[j] > tiny)) continue;
          let d = 0;
          for (let i = 0; i < m; i++) d += U[i * n + j] * v[i];
          for (let i = 0; i < m; i++) v[i] -= d * U[i * n + j];
        }
      let nn = 0;
      for (let i = 0; i < m; i++) nn += v[i] * v[i];
      nn = Math.sqrt(nn);
      if (nn > 0.5) {
        for (let i = 0; i < m; i++) U[i * n + k] = v[i] / nn;
        s[k] = s[k] > tiny ? s[k] : s[k];
        break;
      }
    }
  }
}
