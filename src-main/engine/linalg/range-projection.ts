/**
 * The last step of the randomized SVDs: given an orthonormal basis Q (m×L) of A's approximate range,
 * form B = QᵀA and the rank-k SVD of A from the SVD of the small B, by one-sided Jacobi on the R of
 * Bᵀ = Q₂R, or, from L = 48 up, by the eigen-decomposition of the Gram matrix B·Bᵀ (with a refinement
 * when σ_k/σ₁ is small).
 *
 * References
 * - N. Halko, P.-G. Martinsson, J. A. Tropp, "Finding structure with randomness", SIAM Review
 *   53(2):217–288, 2011. doi:10.1137/090771806. Algorithm 5.1 (direct SVD of B = QᵀA).
 * - G. H. Golub, C. F. Van Loan, "Matrix Computations", 4th ed., 2013, §8.1.2 (Weyl: the Gram route's
 *   eigenvalue error ≲ L·ε·σ₁²) — section number from memory.
 */
import { jacobiSvdIn } from './jacobi-svd';
import type { FloatArray, SvdResult } from './matrix';
import { takeOutput } from './output-arrays';
import { Orthonormalizer } from './qr';
import { symmetricEigen } from './symmetric-eigen';
import type { Workspace } from './workspace';

/**
 * From this many columns l·blocks up, the small SVD uses the eigen-decomposition of the L×L Gram
 * matrix B·Bᵀ (tridiagonalisation + QL, O(L³) with small constants) instead of one-sided Jacobi on R
 * (many O(L³) sweeps): at L ≈ 544 this is seconds against well under one.
 */
const GRAM_CORE_MIN = 48;
/**
 * The Gram route squares the conditioning: V = Bᵀ·W_k·Σ⁻¹ has columns orthogonal only to
 * ≈ L·ε·σ₁²/(σᵢσⱼ). When σ_k/σ₁ is below this ratio (f32 factors: loss ≳ 1e-7; f64: ≳ 1e-11) the
 * result is refined (see `gramCore`); below GRAM_CORE_FLOOR the Jacobi route on R runs instead.
 */
const GRAM_CORE_RATIO_F32 = 3e-4;
const GRAM_CORE_RATIO_F64 = 3e-3;
/** σ_k/σ₁ below this (√ε territory for the Gram eigenvalues) sends the small SVD to Jacobi on R. */
const GRAM_CORE_FLOOR = 1e-6;

/**
 * The final projection: B = QᵀA for the orthonormal m×L basis Q, and the truncated SVD of A from the
 * SVD of the small B. When `keepAtQ` (n×L) is given it receives AᵀQ (for a further power step).
 */
export function project(
  ws: Workspace,
  orth: Orthonormalizer,
  A: FloatArray,
  Qm: FloatArray,
  m: number,
  n: number,
  k: number,
  L: number,
  f32: boolean,
  alloc: (len: number) => FloatArray,
  keepAtQ?: FloatArray,
): SvdResult {
  const mulAt = (X: FloatArray, out: FloatArray, w: number) =>
    ws.gemm(n, w, m, A, 0, 1, n, X, 0, w, out, 0, w, false);
  // B = QᵀA (L×n), handled as Bᵀ = AᵀQ (n×L) = Q₂R; R = U_R Σ V_Rᵀ; A ≈ (Q V_R) Σ (Q₂ U_R)ᵀ.
  const Bt = alloc(n * L);
  mulAt(Qm, Bt, L);
  keepAtQ?.set(Bt.subarray(0, n * L));
  const Btd = ws.f64(n * L);
  for (let i = 0; i < n * L; i++) Btd[i] = Bt[i];
  if (L >= GRAM_CORE_MIN) {
    const done = gramCore();
    if (done) return done;
  }
  const R = ws.f64(L * L);
  const orth64 = f32 ? new Orthonormalizer(ws, n, L, false) : orth;
  orth64.run(Btd, n, L, R);
  const small = jacobiSvdIn({ rows: L, cols: L, data: R }, ws);
  // small.U: L×L (left vectors of R), small.V: L×L (right vectors of R).
  const Vk = alloc(L * k);
  for (let i = 0; i < L; i++) for (let j = 0; j < k; j++) Vk[i * k + j] = small.V.data[i * small.V.cols + j];
  const U = alloc(m * k);
  ws.gemm(m, k, L, Qm, 0, L, 1, Vk, 0, k, U, 0, k, false);
  const Uk = ws.f64(L * k);
  for (let i = 0; i < L; i++) for (let j = 0; j < k; j++) Uk[i * k + j] = small.U.data[i * small.U.cols + j];
  const V64 = ws.f64(n * k);
  ws.gemm(n, k, L, Btd, 0, L, 1, Uk, 0, k, V64, 0, k, false);
  const s = new Float64Array(k);
  for (let j = 0; j < k; j++) s[j] = small.s[j];
  const Uout = takeOutput(m * k, f32);
  Uout.set(U);
  const Vout = takeOutput(n * k, f32);
  for (let i = 0; i < n * k; i++) Vout[i] = V64[i];
  return { s, U: { rows: m, cols: k, data: Uout }, V: { rows: n, cols: k, data: Vout } };

  /**
   * Small SVD through the Gram matrix: B = QᵀA (L×n) with Bᵀ = Btd; G = B·Bᵀ = Btdᵀ·Btd = W·Λ·Wᵀ;
   * then σᵢ = √λᵢ, U = Q·W_k and V = Bᵀ·W_k·Σ⁻¹ (columns normalised). Returns null when σ_k/σ₁ is
   * too small for the Gram route's accuracy (see GRAM_CORE_RATIO_*); the caller then uses Jacobi.
   * Accuracy of the leading k: |λ̂ᵢ − σᵢ²| ≲ c·L·ε·σ₁² (Weyl), i.e. σᵢ to ≲ c·L·ε·σ₁²/(2σᵢ) — below
   * 1e-9·σ₁ for σᵢ ≥ 3e-4·σ₁ and L ≤ 600 — far inside the range finder's own error.
   */
  function gramCore(): SvdResult | null {
    const G = ws.f64(L * L);
    // G(i,j) = Σ_p Btd[p, i]·Btd[p, j]: Aᵀ·B form with rsA = 1, csA = L.
    ws.gemm(L, L, n, Btd, 0, 1, L, Btd, 0, L, G, 0, L, false);
    const { values, vectorsT } = symmetricEigen(G, L, ws);
    const s1 = Math.sqrt(Math.max(values[0], 0));
    const sk = Math.sqrt(Math.max(values[k - 1], 0));
    if (!(s1 > 0) || sk < GRAM_CORE_FLOOR * s1) return null;
    const Wk = alloc(L * k);
    const Wk64 = ws.f64(L * k);
    for (let i = 0; i < L; i++)
      for (let j = 0; j < k; j++) {
        Wk[i * k + j] = vectorsT[j * L + i];
        Wk64[i * k + j] = vectorsT[j * L + i];
      }
    const s = new Float64Array(k);
    for (let j = 0; j < k; j++) s[j] = Math.sqrt(Math.max(values[j], 0));
    const V64 = ws.f64(n * k);
    ws.gemm(n, k, L, Btd, 0, L, 1, Wk64, 0, k, V64, 0, k, false);
    const U = alloc(m * k);
    const Uout = takeOutput(m * k, f32);
    const Vout = takeOutput(n * k, f32);
    if (sk >= (f32 ? GRAM_CORE_RATIO_F32 : GRAM_CORE_RATIO_F64) * s1) {
      ws.gemm(m, k, L, Qm, 0, L, 1, Wk, 0, k, U, 0, k, false);
      const nrm = new Float64Array(k);
      for (let i = 0; i < n; i++) for (let j = 0; j < k; j++) nrm[j] += V64[i * k + j] * V64[i * k + j];
      for (let j = 0; j < k; j++) nrm[j] = nrm[j] > 0 ? 1 / Math.sqrt(nrm[j]) : 0;
      Uout.set(U);
      for (let i = 0; i < n; i++) for (let j = 0; j < k; j++) Vout[i * k + j] = V64[i * k + j] * nrm[j];
      return { s, U: { rows: m, cols: k, data: Uout }, V: { rows: n, cols: k, data: Vout } };
    }
    // Refinement. U_k = Q·W_k is orthonormal (W from QL), and Bᵀ·W_k = Aᵀ·U_k exactly up to rounding,
    // so A ≈ U_k·(Bᵀ W_k)ᵀ is the best approximation on span(U_k) whatever the Gram error. Write
    // Bᵀ W_k Σ⁻¹ = V'·R' (well conditioned: R' ≈ I, CholeskyQR2), so A ≈ U_k·(Σ R'ᵀ)·V'ᵀ, and take the
    // SVD of the nearly diagonal k×k matrix M = Σ R'ᵀ by Jacobi (1–2 sweeps): M = U_M Σ' V_Mᵀ,
    // U = Q·(W_k U_M), V = V'·V_M.
    for (let i = 0; i < n; i++) for (let j = 0; j < k; j++) V64[i * k + j] /= s[j];
    const Rr = ws.f64(k * k);
    new Orthonormalizer(ws, n, k, false).run(V64, n, k, Rr);
    const M = ws.f64(k * k);
    for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) M[i * k + j] = s[i] * Rr[j * k + i];
    const small = jacobiSvdIn({ rows: k, cols: k, data: M }, ws);
    const Um = small.U.data;
    const Vm = small.V.data;
    const W2 = ws.f64(L * k);
    ws.gemm(L, k, k, Wk64, 0, k, 1, copyTo(ws, Um), 0, k, W2, 0, k, false);
    const W2a = alloc(L * k);
    for (let i = 0; i < L * k; i++) W2a[i] = W2[i];
    ws.gemm(m, k, L, Qm, 0, L, 1, W2a, 0, k, U, 0, k, false);
    Uout.set(U);
    const V2 = ws.f64(n * k);
    ws.gemm(n, k, k, V64, 0, k, 1, copyTo(ws, Vm), 0, k, V2, 0, k, false);
    for (let i = 0; i < n * k; i++) Vout[i] = V2[i];
    return {
      s: Float64Array.from(small.s),
      U: { rows: m, cols: k, data: Uout },
      V: { rows: n, cols: k, data: Vout },
    };
  }
}

/** Copy a plain array into the workspace so the kernel can read it. */
function copyTo(ws: Workspace, x: ArrayLike<number>): Float64Array {
  const y = ws.f64(x.length);
  for (let i = 0; i < x.length; i++) y[i] = x[i];
  return y;
}
