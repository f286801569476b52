/**
 * Eigen-decomposition of a small symmetric matrix: Householder tridiagonalisation, then the implicit
 * QL algorithm. Used for the Gram matrix of a patch group: the singular values of the group Y are the
 * square roots of the eigenvalues of YᵀY (or YYᵀ), and its singular vectors are the eigenvectors. For the
 * d ≤ 81 sizes of patch groups this is several times cheaper than a one-sided Jacobi SVD of Y, which
 * matters because a scan has ~10⁵ groups.
 *
 * Why a second symmetric eigen-solver beside symmetric-eigen.ts: this one is the EISPACK tred2/tql2 pair
 * in JAMA's loop order (Givens updates on columns of V, sorted ascending, in place on a reusable
 * workspace), whereas symmetric-eigen.ts is Householder + tql1/tql2 with a Wilkinson shift written for
 * contiguous rows and a WebAssembly twin. The two round differently, and `rankfold clean`'s output bytes
 * are fixed by this one (test/fixtures/golden-outputs.json), so it stays a separate, named variant.
 *
 * References
 * - H. Bowdler, R. S. Martin, C. Reinsch, J. H. Wilkinson, "The QR and QL algorithms for symmetric
 *   matrices", Numer. Math. 11:293–306, 1968 (tql2); R. S. Martin, C. Reinsch, J. H. Wilkinson,
 *   "Householder's tridiagonalization of a symmetric matrix", Numer. Math. 11:181–195, 1968 (tred2).
 *   Both reprinted in Wilkinson & Reinsch, Handbook for Automatic Computation II, Springer 1971.
 * - The loop structure follows the public-domain JAMA 1.0.3 port (NIST/MathWorks, 2012) of the
 *   EISPACK routines.
 */

/** Working storage for one size, reused across calls to avoid allocation in the group loop. */
export interface EigenWorkspace {
  n: number;
  /** n×n row-major: input matrix on entry (lower triangle used), eigenvectors (columns) on exit. */
  V: Float64Array;
  /** Eigenvalues, ascending, on exit. */
  d: Float64Array;
  e: Float64Array;
}

export function eigenWorkspace(n: number): EigenWorkspace {
  return { n, V: new Float64Array(n * n), d: new Float64Array(n), e: new Float64Array(n) };
}

/**
 * In place: ws.V holds a symmetric matrix; afterwards ws.d holds its eigenvalues in ascending order
 * and column k of ws.V the eigenvector of ws.d[k].
 */
export function smallSymmetricEigen(ws: EigenWorkspace): void {
  tred2(ws);
  tql2(ws);
}

/**
 * In place, for a symmetric tridiagonal matrix of order k ≤ ws.n: diagonal in ws.d[0..k), off-diagonal
 * (i−1, i) in ws.e[i] for i = 1..k−1. Afterwards ws.d holds the eigenvalues ascending and ws.V (k×k,
 * row stride k) the eigenvectors as columns.
 */
export function smallTridiagonalEigen(ws: EigenWorkspace, k: number): void {
  const { V, e } = ws;
  V.fill(0, 0, k * k);
  for (let i = 0; i < k; i++) V[i * k + i] = 1;
  e[0] = 0;
  tql2({ n: k, V, d: ws.d, e });
}

function tred2(ws: EigenWorkspace) {
  const { n, V, d, e } = ws;
  for (let j = 0; j < n; j++) d[j] = V[(n - 1) * n + j];
  for (let i = n - 1; i > 0; i--) {
    let scale = 0;
    let h = 0;
    for (let k = 0; k < i; k++) scale += Math.abs(d[k]);
    if (scale === 0) {
      e[i] = d[i - 1];
      for (let j = 0; j < i; j++) {
        d[j] = V[(i - 1) * n + j];
        V[i * n + j] = 0;
        V[j * n + i] = 0;
      }
    } else {
      for (let k = 0; k < i; k++) {
        d[k] /= scale;
        h += d[k] * d[k];
      }
      let f = d[i - 1];
      let g = Math.sqrt(h);
      if (f > 0) g = -g;
      e[i] = scale * g;
      h -= f * g;
      d[i - 1] = f - g;
      for (let j = 0; j < i; j++) e[j] = 0;
      for (let j = 0; j < i; j++) {
        f = d[j];
        V[j * n + i] = f;
        g = e[j] + V[j * n + j] * f;
        for (let k = j + 1; k <= i - 1; k++) {
          g += V[k * n + j] * d[k];
          e[k] += V[k * n + j] * f;
        }
        e[j] = g;
      }
      f = 0;
      for (let j = 0; j < i; j++) {
        e[j] /= h;
        f += e[j] * d[j];
      }
      const hh = f / (h + h);
      for (let j = 0; j < i; j++) e[j] -= hh * d[j];
      for (let j = 0; j < i; j++) {
        f = d[j];
        g = e[j];
        for (let k = j; k <= i - 1; k++) V[k * n + j] -= f * e[k] + g * d[k];
        d[j] = V[(i - 1) * n + j];
        V[i * n + j] = 0;
      }
    }
    d[i] = h;
  }
  // Accumulate transformations.
  for (let i = 0; i < n - 1; i++) {
    V[(n - 1) * n + i] = V[i * n + i];
    V[i * n + i] = 1;
    const h = d[i + 1];
    if (h !== 0) {
      for (let k = 0; k <= i; k++) d[k] = V[k * n + i + 1] / h;
      for (let j = 0; j <= i; j++) {
        let g = 0;
        for (let k = 0; k <= i; k++) g += V[k * n + i + 1] * V[k * n + j];
        for (let k = 0; k <= i; k++) V[k * n + j] -= g * d[k];
      }
    }
    for (let k = 0; k <= i; k++) V[k * n + i + 1] = 0;
  }
  for (let j = 0; j < n; j++) {
    d[j] = V[(n - 1) * n + j];
    V[(n - 1) * n + j] = 0;
  }
  V[(n - 1) * n + n - 1] = 1;
  e[0] = 0;
}

/** 2^-52, the float64 unit roundoff used by tql2's convergence test. */
const EPS = 2 ** -52;

function tql2(ws: EigenWorkspace) {
  const { n, V, d, e } = ws;
  for (let i = 1; i < n; i++) e[i - 1] = e[i];
  e[n - 1] = 0;
  let f = 0;
  let tst1 = 0;
  for (let l = 0; l < n; l++) {
    tst1 = Math.max(tst1, Math.abs(d[l]) + Math.abs(e[l]));
    let m = l;
    while (m < n) {
      if (Math.abs(e[m]) <= EPS * tst1) break;
      m++;
    }
    if (m > l) {
      for (let iter = 0; iter < 64; iter++) {
        let g = d[l];
        let p = (d[l + 1] - g) / (2 * e[l]);
        let r = Math.sqrt(p * p + 1);
        if (p < 0) r = -r;
        d[l] = e[l] / (p + r);
        d[l + 1] = e[l] * (p + r);
        const dl1 = d[l + 1];
        let h = g - d[l];
        for (let i = l + 2; i < n; i++) d[i] -= h;
        f += h;
        p = d[m];
        let c = 1;
        let c2 = c;
        let c3 = c;
        const el1 = e[l + 1];
        let s = 0;
        let s2 = 0;
        for (let i = m - 1; i >= l; i--) {
          c3 = c2;
          c2 = c;
          s2 = s;
          g = c * e[i];
          h = c * p;
          r = Math.sqrt(p * p + e[i] * e[i]);
          e[i + 1] = s * r;
          s = e[i] / r;
          c = p / r;
          p = c * d[i] - s * g;
          d[i + 1] = h + s * (c * g + s * d[i]);
          for (let k = 0; k < n; k++) {
            const o = k * n;
            h = V[o + i + 1];
            V[o + i + 1] = s * V[o + i] + c * h;
            V[o + i] = c * V[o + i] - s * h;
          }
        }
        p = (-s * s2 * c3 * el1 * e[l]) / dl1;
        e[l] = s * p;
        d[l] = c * p;
        if (!(Math.abs(e[l]) > EPS * tst1)) break;
      }
    }
    d[l] += f;
    e[l] = 0;
  }
  // Sort eigenvalues (ascending) and vectors.
  for (let i = 0; i < n - 1; i++) {
    let k = i;
    let p = d[i];
    for (let j = i + 1; j < n; j++)
      if (d[j] < p) {
        k = j;
        p = d[j];
      }
    if (k !== i) {
      d[k] = d[i];
      d[i] = p;
      for (let j = 0; j < n; j++) {
        const o = j * n;
        const t = V[o + i];
        V[o + i] = V[o + k];
        V[o + k] = t;
      }
    }
  }
}

/**
 * The smaller Gram matrix of Y (m×n row-major, stride n) into G (min(m, n)² row-major, both triangles):
 * YᵀY when n ≤ m, else YYᵀ. Returns true for YᵀY. Each entry is one dot product in index order.
 */
export function smallGram(Y: Float64Array, m: number, n: number, G: Float64Array): boolean {
  const byCols = n <= m;
  const small = byCols ? n : m;
  for (let a = 0; a < small; a++)
    for (let b = 0; b <= a; b++) {
      let s = 0;
      if (byCols) for (let i = 0; i < m; i++) s += Y[i * n + a] * Y[i * n + b];
      else for (let k = 0; k < n; k++) s += Y[a * n + k] * Y[b * n + k];
      G[a * small + b] = s;
      G[b * small + a] = s;
    }
  return byCols;
}
