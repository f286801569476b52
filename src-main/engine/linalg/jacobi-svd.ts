/**
 * One-sided Jacobi SVD (Hestenes), for small and medium matrices such as tiles and patch groups, and
 * for the small core matrix of the randomized SVD.
 *
 * References
 * - J. Demmel, K. Veselić, "Jacobi's method is more accurate than QR", SIAM J. Matrix Anal. Appl.
 *   13(4):1204–1245, 1992. doi:10.1137/0613074. §4, one-sided Jacobi on columns; the rotation test
 *   |γ| > tol·√(αβ) is their stopping criterion, giving small relative error in every σ.
 * - M. R. Hestenes, "Inversion of matrices by biorthogonalization and related results",
 *   J. SIAM 6(1):51–90, 1958. doi:10.1137/0106005.
 * - Z. Drmač, K. Veselić, "New fast and accurate Jacobi SVD algorithm I", SIAM J. Matrix Anal. Appl.
 *   29(4):1322–1342, 2008. doi:10.1137/050639193. §3: a QR factorisation first (we do so for tall
 *   inputs, m > 2n) shortens the columns Jacobi rotates.
 */

import { householderQr } from './householder-qr';
import { type Matrix, type SvdResult, transpose } from './matrix';
import { Rng } from './random';
import { bytesFor, defaultBackend, type Workspace } from './workspace';

/** Machine epsilon of float64. */
const EPS = 2.220446049250313e-16;
/** Sweeps before giving up; one-sided Jacobi converges quadratically, so 60 is far beyond need. */
const MAX_SWEEPS = 60;
/** Precondition with QR when m > TALL_RATIO·n: Jacobi then rotates n-long instead of m-long columns. */
const TALL_RATIO = 2;
/** Below this many columns the TypeScript sweeps are as fast as a kernel call. */
const FAST_MIN = 8;
/** Fixed seed of the completion block for zero singular values (deterministic output). */
const COMPLETION_SEED = 0x0c0ffee;

/**
 * Full thin SVD of an m×n matrix by one-sided Jacobi in float64.
 * Returns min(m,n) singular triplets with s non-increasing. U is m×r, V is n×r, r = min(m,n).
 * Accuracy: every σᵢ to a small multiple of ε·σᵢ·κ(column-scaled A) (Demmel–Veselić 1992, §4),
 * in practice ≤ ~1e-14 relative for σᵢ ≥ 1e-3·σ₁ and ≤ ~1e-15·σ₁ absolute below.
 * @example const { s, U, V } = jacobiSvd(fromRows([[3, 0], [4, 5]]));
 */
export function jacobiSvd(a: Matrix): SvdResult {
  return withWorkspace(a, true) as SvdResult;
}

/** Singular values only (same accuracy as `jacobiSvd`, no vectors accumulated). */
export function jacobiSingularValues(a: Matrix): Float64Array {
  return withWorkspace(a, false).s;
}

/** Workspace bytes `jacobiSvdIn` needs for an m×n input. */
export function jacobiBytes(m: number, n: number): number {
  const r = Math.min(m, n);
  const rows = Math.min(Math.max(m, n), TALL_RATIO * r);
  return bytesFor(0, r * rows + r * r + 2 * r);
}

function withWorkspace(a: Matrix, vectors: boolean) {
  const ws = defaultBackend().workspace(jacobiBytes(a.rows, a.cols));
  try {
    return jacobi(a, vectors, ws);
  } finally {
    ws.release();
  }
}

/** `jacobiSvd` on a caller's workspace (which must have `jacobiBytes(m, n)` free): the sweeps run on its kernel. */
export function jacobiSvdIn(a: Matrix, ws: Workspace): SvdResult {
  return jacobi(a, true, ws) as SvdResult;
}

function jacobi(a: Matrix, vectors: boolean, ws?: Workspace): { s: Float64Array; U?: Matrix; V?: Matrix } {
  if (a.rows < a.cols) {
    const t = jacobi(transpose(a), vectors, ws);
    return { s: t.s, U: t.V, V: t.U };
  }
  const m = a.rows;
  const n = a.cols;
  if (n === 0)
    return {
      s: new Float64Array(0),
      U: { rows: m, cols: 0, data: new Float64Array(0) },
      V: { rows: 0, cols: 0, data: new Float64Array(0) },
    };
  let Q: Float64Array | null = null;
  let src: ArrayLike<number> = a.data;
  let rows = m;
  if (m > TALL_RATIO * n) {
    // A = Q·R; the SVD of R gives A's: U = Q·U_R.
    const W = new Float64Array(m * n);
    for (let i = 0; i < m * n; i++) W[i] = a.data[i];
    const R = householderQr(W, m, n);
    Q = W;
    src = R;
    rows = n;
  }
  // Columns of the working matrix are contiguous: W[j*rows + i] = A[i, j]. Vt holds Vᵀ (rows contiguous).
  const fast = ws?.jacobi !== undefined && n >= FAST_MIN;
  const W = fast ? ws!.f64(n * rows) : new Float64Array(n * rows);
  for (let i = 0; i < rows; i++) for (let j = 0; j < n; j++) W[j * rows + i] = src[i * n + j];
  const Vt = vectors ? (fast ? ws!.f64(n * n) : new Float64Array(n * n)) : null;
  if (Vt) {
    Vt.fill(0);
    for (let j = 0; j < n; j++) Vt[j * n + j] = 1;
  }
  /** Rotation threshold: columns count as orthogonal when |γ| ≤ rows·ε·√(αβ) (Demmel–Veselić §4). */
  const tol = EPS * rows;
  /**
   * Negligible-column floor: a pair whose smaller column has norm ≤ ε·‖A‖_F is not rotated. Such a
   * rotation would move the other column by at most that norm (a backward error of ε‖A‖_F), and
   * rotating noise-level columns against each other otherwise never meets the relative test above
   * (rank-deficient inputs then ran all MAX_SWEEPS).
   */
  let fro2 = 0;
  for (let i = 0; i < n * rows; i++) fro2 += W[i] * W[i];
  const floor2 = EPS * EPS * fro2;
  const done = fast ? ws!.jacobi!(W, rows, n, Vt, tol, MAX_SWEEPS, floor2, ws!.f64(n)) : -1;
  for (let sweep = 0; sweep < MAX_SWEEPS && done < 0; sweep++) {
    let rotated = false;
    for (let p = 0; p < n - 1; p++) {
      const po = p * rows;
      for (let q = p + 1; q < n; q++) {
        const qo = q * rows;
        let alpha = 0;
        let beta = 0;
        let gamma = 0;
        for (let i = 0; i < rows; i++) {
          const x = W[po + i];
          const y = W[qo + i];
          alpha += x * x;
          beta += y * y;
          gamma += x * y;
        }
        if (
          gamma === 0 ||
          Math.abs(gamma) <= tol * Math.sqrt(alpha * beta) ||
          Math.min(alpha, beta) <= floor2
        )
          continue;
        rotated = true;
        const zeta = (beta - alpha) / (2 * gamma);
        const t = Math.sign(zeta || 1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
        const c = 1 / Math.sqrt(1 + t * t);
        const s = c * t;
        rotate(W, po, qo, rows, c, s);
        if (Vt) rotate(Vt, p * n, q * n, n, c, s);
      }
    }
    if (!rotated) break;
  }
  const norms = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let i = 0; i < rows; i++) s += W[j * rows + i] * W[j * rows + i];
    norms[j] = Math.sqrt(s);
  }
  const order = Array.from({ length: n }, (_, j) => j).sort((x, y) => norms[y] - norms[x] || x - y);
  const s = new Float64Array(n);
  for (let k = 0; k < n; k++) s[k] = norms[order[k]];
  if (!Vt) return { s };
  const sigmaMax = s[0] ?? 0;
  /** Columns with σ below this are treated as zero and replaced by an orthonormal completion. */
  const tiny = sigmaMax * EPS * rows;
  let Ur = new Float64Array(rows * n);
  const Vout = new Float64Array(n * n);
  for (let k = 0; k < n; k++) {
    const j = order[k];
    const inv = norms[j] > tiny && norms[j] > 0 ? 1 / norms[j] : 0;
    for (let i = 0; i < rows; i++) Ur[i * n + k] = W[j * rows + i] * inv;
    for (let i = 0; i < n; i++) Vout[i * n + k] = Vt[j * n + i];
  }
  completeOrthonormal(Ur, rows, n, s, tiny);
  if (Q) {
    // U = Q·U_R (m×n · n×n).
    const U = new Float64Array(m * n);
    for (let i = 0; i < m; i++)
      for (let p = 0; p < n; p++) {
        const qv = Q[i * n + p];
        if (qv === 0) continue;
        for (let j = 0; j < n; j++) U[i * n + j] += qv * Ur[p * n + j];
      }
    Ur = U;
  }
  return { s, U: { rows: m, cols: n, data: Ur }, V: { rows: n, cols: n, data: Vout } };
}

/**
 * Replace the columns of U whose σ is negligible (the sorted tail, σ ≤ tiny) by an orthonormal
 * completion: Householder QR of [U_good | fixed pseudo-random block]; the Q columns beyond the good
 * ones are orthogonal to them. O(m·n²) once, instead of a search per column.
 */
function completeOrthonormal(U: Float64Array, m: number, n: number, s: Float64Array, tiny: number) {
  let g = 0;
  while (g < n && s[g] > tiny && s[g] > 0) g++;
  if (g === n) return;
  const M = new Float64Array(m * n);
  const rng = new Rng(COMPLETION_SEED);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) M[i * n + j] = j < g ? U[i * n + j] : rng.normal();
  householderQr(M, m, n);
  for (let i = 0; i < m; i++) for (let j = g; j < n; j++) U[i * n + j] = M[i * n + j];
}

/** Plane rotation of two stored columns: (x, y) ← (c·x − s·y, s·x + c·y) for the `len` entries at p and q. */
function rotate(X: Float64Array, p: number, q: number, len: number, c: number, s: number): void {
  for (let i = 0; i < len; i++) {
    const x = X[p + i];
    const y = X[q + i];
    X[p + i] = c * x - s * y;
    X[q + i] = s * x + c * y;
  }
}
