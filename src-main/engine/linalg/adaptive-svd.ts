/**
 * Adaptive-rank randomized SVD: the smallest rank whose truncated SVD meets a spectral-norm tolerance,
 * certified by the a-posteriori error estimate of HMT §4.3.
 *
 * References
 * - N. Halko, P.-G. Martinsson, J. A. Tropp, "Finding structure with randomness", SIAM Review
 *   53(2):217–288, 2011. doi:10.1137/090771806. §4.3, eq. (4.3) (Lemma 4.1 of the arXiv version):
 *   for any matrix E and r independent standard Gaussian vectors ω⁽ⁱ⁾,
 *   ‖E‖₂ ≤ 10·√(2/π)·maxᵢ ‖Eω⁽ⁱ⁾‖ with probability at least 1 − 10⁻ʳ.
 *   We apply it to E = A − U_j·diag(s_j)·V_jᵀ directly, for every candidate rank j at once.
 */
import { type Matrix, matrix, type SvdResult } from './matrix';
import { DEFAULT_SEED, Rng } from './random';
import { checkRank, type RandomizedSvdOptions, randomizedSvd } from './randomized-svd';

/** HMT eq. (4.3): the factor 10·√(2/π) between the largest probe norm and the bound. */
const HMT_ESTIMATE_FACTOR = 10 * Math.sqrt(2 / Math.PI);
/** Probe vectors r: the estimate holds with probability ≥ 1 − 10⁻ʳ (HMT §4.3). */
const DEFAULT_PROBES = 10;
/** First rank tried; the rank then doubles until the estimate meets the tolerance. */
const DEFAULT_INITIAL_RANK = 16;

export interface AdaptiveSvdOptions extends RandomizedSvdOptions {
  /** Probe vectors r (failure probability 10⁻ʳ). Default 10, range 1…50. */
  probes?: number;
  /** First rank tried. Default 16. */
  initialRank?: number;
  /** Never return more than this rank. Default min(m, n). */
  maxRank?: number;
}

export interface AdaptiveSvdResult extends SvdResult {
  /** Rank of the result (= s.length). */
  rank: number;
  /** HMT §4.3 upper estimate of ‖A − U·diag(s)·Vᵀ‖₂ (holds with probability ≥ 1 − 10⁻ʳ). */
  errorEstimate: number;
  /** Whether errorEstimate ≤ tol (false only when maxRank was reached first). */
  converged: boolean;
}

/**
 * Truncated SVD with the smallest rank j such that the HMT §4.3 estimate of ‖A − A_j‖₂ is ≤ `tol`
 * (absolute, in the units of A). Tries rank 16, 32, 64, … (randomizedSvd each time) and then picks
 * the smallest sufficient j within the last try.
 * @throws RangeError when tol is negative or not finite, or A has NaN/infinite entries.
 * @example const r = adaptiveRandomizedSvd(plane, 0.01 * sigma1); // r.rank, r.errorEstimate
 */
export function adaptiveRandomizedSvd(
  a: Matrix,
  tol: number,
  opts: AdaptiveSvdOptions = {},
): AdaptiveSvdResult {
  if (!(tol >= 0) || !Number.isFinite(tol))
    throw new RangeError(`adaptiveRandomizedSvd: expected a finite number ≥ 0 for tol but received ${tol}`);
  const m = a.rows;
  const n = a.cols;
  const full = Math.min(m, n);
  const maxRank = Math.min(opts.maxRank ?? full, full);
  checkRank(a, maxRank, 'adaptiveRandomizedSvd (maxRank)');
  const r = opts.probes ?? DEFAULT_PROBES;
  if (!Number.isInteger(r) || r < 1 || r > 50)
    throw new RangeError(
      `adaptiveRandomizedSvd: expected integer between 1 and 50 for probes but received ${r}`,
    );
  // Probe block Ω (n×r) and AΩ (m×r), computed once in f64.
  const rng = new Rng((opts.seed ?? DEFAULT_SEED) ^ 0x9e3779b9);
  const Om = new Float64Array(n * r);
  rng.fillNormal(Om);
  const AOm = new Float64Array(m * r);
  for (let i = 0; i < m; i++)
    for (let p = 0; p < n; p++) {
      const v = a.data[i * n + p];
      if (v === 0) continue;
      for (let c = 0; c < r; c++) AOm[i * r + c] += v * Om[p * r + c];
    }
  for (let i = 0; i < m * r; i++)
    if (!Number.isFinite(AOm[i]))
      throw new RangeError('adaptiveRandomizedSvd: matrix has NaN or infinite entries');
  let k = Math.min(opts.initialRank ?? DEFAULT_INITIAL_RANK, maxRank);
  for (;;) {
    const res = randomizedSvd(a, k, opts);
    const est = estimates(res, Om, AOm, m, n, r);
    let j = 0;
    while (j < k && est[j] > tol) j++;
    if (j < k || est[k] <= tol || k >= maxRank) {
      const rank = j <= k && est[j] <= tol ? j : k;
      return truncate(res, rank, est[rank], est[rank] <= tol);
    }
    k = Math.min(2 * k, maxRank);
  }
}

/** est[j] = 10√(2/π)·maxᵢ‖(A − U_j S_j V_jᵀ)ωᵢ‖ for j = 0…k. */
function estimates(
  res: SvdResult,
  Om: Float64Array,
  AOm: Float64Array,
  m: number,
  n: number,
  r: number,
): Float64Array {
  const k = res.s.length;
  const Vt = new Float64Array(k * r); // s_t·(v_tᵀ ω_c)
  for (let p = 0; p < n; p++)
    for (let t = 0; t < k; t++) {
      const v = res.V.data[p * k + t] * res.s[t];
      for (let c = 0; c < r; c++) Vt[t * r + c] += v * Om[p * r + c];
    }
  const E = Float64Array.from(AOm); // E_0 ω = Aω
  const norms = new Float64Array((k + 1) * r);
  const colNorms = (j: number) => {
    for (let c = 0; c < r; c++) {
      let s = 0;
      for (let i = 0; i < m; i++) s += E[i * r + c] * E[i * r + c];
      norms[j * r + c] = Math.sqrt(s);
    }
  };
  colNorms(0);
  for (let t = 0; t < k; t++) {
    for (let i = 0; i < m; i++) {
      const u = res.U.data[i * k + t];
      for (let c = 0; c < r; c++) E[i * r + c] -= u * Vt[t * r + c];
    }
    colNorms(t + 1);
  }
  const est = new Float64Array(k + 1);
  for (let j = 0; j <= k; j++) {
    let mx = 0;
    for (let c = 0; c < r; c++) mx = Math.max(mx, norms[j * r + c]);
    est[j] = HMT_ESTIMATE_FACTOR * mx;
  }
  return est;
}

function truncate(res: SvdResult, j: number, errorEstimate: number, converged: boolean): AdaptiveSvdResult {
  const k = res.s.length;
  const take = (M: Matrix): Matrix => {
    const out = new (M.data.constructor as Float64ArrayConstructor)(M.rows * j);
    for (let i = 0; i < M.rows; i++) for (let t = 0; t < j; t++) out[i * j + t] = M.data[i * k + t];
    return matrix(M.rows, j, out);
  };
  return { s: res.s.slice(0, j), U: take(res.U), V: take(res.V), rank: j, errorEstimate, converged };
}
