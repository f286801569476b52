/**
 * Thin SVD of a small matrix through the eigen-decomposition of its Gram matrix, as contiguous columns:
 * for n ≤ m (else on Aᵀ), G = AᵀA = W·Λ·Wᵀ by symmetric-eigen.ts (its WebAssembly kernel when loaded), V = W,
 * and each column A·w gives σ as its norm (more accurate for small σ than √λ) and u as itself over that
 * norm. Triplets are sorted by σ, non-increasing (ties by λ, then by the eigenpair's index). The kernel's
 * eigenpairs are used as it leaves them, unsorted: ordering them by λ first (symmetricEigen) cost a sort, two
 * fresh arrays and an n² copy per tile, ~13 % of the warm crop estimate, for the same arrays bit for bit.
 *
 * Cost: about 2mnk + 4k³ flops for the decomposition, against one-sided Jacobi's 6–10 sweeps of ≈ 3mk²
 * each. On the 512² crop of an 8.25-MP scan (warm, load 18) its 256 tiles of 32² took 25–30 ms of user CPU
 * against Jacobi's 73–79, its 64 tiles of 64² 24–28 ms against 135. Accuracy: forming G squares the
 * condition number, so each σᵢ is good to about k·ε·σ₁²/σᵢ in absolute terms and each vector's angle to
 * about k·ε·σ₁²/(σᵢ·gapᵢ) (Weyl and Davis–Kahan, GVL 4th ed. §8.1 and §8.6 — from memory), against ε·σᵢ for
 * Jacobi (Demmel–Veselić 1992). That is for estimates that only look at components well above ε·σ₁ (the
 * crop estimate of src-main/engine/lowrank/base-estimate.ts), not for the factors a file stores.
 *
 * References
 * - G. H. Golub, C. F. Van Loan, "Matrix Computations", 4th ed., Johns Hopkins 2013, §8.6.3 (the SVD from
 *   the eigen-decomposition of AᵀA, and why it loses small singular values) — from memory.
 */

import { type Matrix, transpose } from './matrix';
import { symmetricEigen } from './symmetric-eigen';
import { bytesFor, copyIn, defaultBackend } from './workspace';

/** σ and the singular vectors as contiguous columns: column j of U at u[j·m …], of V at v[j·n …] (A is m×n). */
export interface SvdColumns {
  s: Float64Array;
  u: Float64Array;
  v: Float64Array;
}

/** Scratch f64 values symmetric-eigen.ts's kernel takes per order n besides G and the vectors (e, v, p, v2, p2, β). */
const EIGEN_SCRATCH = 8;

/**
 * The thin SVD of `a` (m×n) through its Gram matrix, k = min(m, n) triplets; zero columns of U where σ is 0.
 * With `into`, the triplets are written to its arrays' first k, k·m and k·n entries (views of them are
 * returned) instead of fresh arrays: the same values.
 */
export function gramSvdColumns(a: Matrix, into?: SvdColumns): SvdColumns {
  const { rows: m, cols: n } = a;
  if (m < n) {
    const t = gramSvdColumns(transpose(a), into && { s: into.s, u: into.v, v: into.u });
    return { s: t.s, u: t.v, v: t.u };
  }
  // n ≤ m: G = AᵀA (n×n) = W·Λ·Wᵀ, V = W and U = A·W·Σ⁻¹.
  const s = into ? into.s.subarray(0, n) : new Float64Array(n);
  const u = into ? into.u.subarray(0, n * m) : new Float64Array(n * m);
  const v = into ? into.v.subarray(0, n * n) : new Float64Array(n * n);
  if (n === 0) return { s, u, v };
  const ws = defaultBackend().workspace(bytesFor(0, 2 * m * n + 3 * n * n + (EIGEN_SCRATCH + 1) * n));
  try {
    const A = copyIn(ws, a.data, m * n, 'f64');
    const G = ws.f64(n * n);
    // G(i, j) = Σ_p A(p, i)·A(p, j): Aᵀ read with row stride 1 and column stride n.
    ws.gemm(n, n, m, A, 0, 1, n, A, 0, n, G, 0, n, false);
    // Eigenpairs unsorted from the kernel when it runs (row i of Et: the vector of λ[i]), else symmetric-eigen.ts's
    // sorted by λ: either way the triplets are ordered below by σ, then λ, then index, which is the order by σ
    // of the λ-sorted pairs (ties by λ position), so the arrays are the same.
    let lam = ws.symEigen ? ws.f64(n) : undefined;
    let Et = ws.symEigen ? ws.f64(n * n) : undefined;
    if (!(ws.symEigen && lam && Et && ws.symEigen(G, n, lam, Et))) {
      const r = symmetricEigen(G, n);
      lam = r.values;
      Et = r.vectorsT;
    }
    const vectorsT = Et;
    const values = lam;
    // W row-major (column j = eigenvector j), then AW (m×n): column j is σⱼ·uⱼ.
    const W = ws.f64(n * n);
    transposeSquare(vectorsT, W, n);
    const AW = ws.f64(m * n);
    ws.gemm(m, n, n, A, 0, n, 1, W, 0, n, AW, 0, n, false);
    const norms = columnNorms(AW, m, n);
    const order = tripletOrder(norms, values, n);
    writeTriplets(order, norms, vectorsT, AW, m, n, s, u, v);
    return { s, u, v };
  } finally {
    ws.release();
  }
}

/** out = xᵀ for n×n row-major x. */
function transposeSquare(x: Float64Array, out: Float64Array, n: number): void {
  for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) out[i * n + j] = x[j * n + i];
}

/** The Euclidean norm of each column of the m×n row-major matrix x, summed down the rows. */
function columnNorms(x: Float64Array, m: number, n: number): Float64Array {
  const norms = new Float64Array(n);
  for (let r = 0; r < m; r++) for (let j = 0; j < n; j++) norms[j] += x[r * n + j] * x[r * n + j];
  for (let j = 0; j < n; j++) norms[j] = Math.sqrt(norms[j]);
  return norms;
}

/**
 * Eigenpair indices by σ (norms), non-increasing, then λ (values), then index. With every norm and value
 * finite that is a strict total order, so an insertion sort (no comparator calls: n ≤ 64 here, the pairs
 * come partly ordered) gives the one sorted order Array sort gives; otherwise Array sort, as before.
 */
function tripletOrder(norms: Float64Array, values: ArrayLike<number>, n: number): ArrayLike<number> {
  let finite = true;
  for (let j = 0; j < n; j++) if (!(Number.isFinite(norms[j]) && Number.isFinite(values[j]))) finite = false;
  if (!finite)
    return Array.from({ length: n }, (_, j) => j).sort(
      (x, y) => norms[y] - norms[x] || values[y] - values[x] || x - y,
    );
  const order = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    let k = i;
    for (; k > 0; k--) {
      const y = order[k - 1];
      // Does i go before y? (y < i, so a tie in σ and λ keeps y first.)
      if (!(norms[i] > norms[y] || (norms[i] === norms[y] && values[i] > values[y]))) break;
      order[k] = y;
    }
    order[k] = i;
  }
  return order;
}

/**
 * Triplet k from eigenpair order[k]: σ its column norm of AW, v its eigenvector (row of vectorsT), u its AW
 * column over σ (zeros where σ is 0). Plain loops: TypedArray set of a subarray view of the kernel's memory
 * cost more than the copy (a fresh view per column, ~7 % of the warm crop estimate).
 */
function writeTriplets(
  order: ArrayLike<number>,
  norms: Float64Array,
  vectorsT: Float64Array,
  AW: Float64Array,
  m: number,
  n: number,
  s: Float64Array,
  u: Float64Array,
  v: Float64Array,
): void {
  for (let k = 0; k < n; k++) {
    const j = order[k];
    s[k] = norms[j];
    for (let i = 0; i < n; i++) v[k * n + i] = vectorsT[j * n + i];
    if (!(norms[j] > 0)) {
      u.fill(0, k * m, k * m + m);
      continue;
    }
    const inv = 1 / norms[j];
    for (let r = 0; r < m; r++) u[k * m + r] = AW[r * n + j] * inv;
  }
}
