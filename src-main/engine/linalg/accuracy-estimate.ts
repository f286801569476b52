/**
 * The randomized SVD's a-posteriori accuracy check (randomizedSvd option `accuracy`): the estimate of the
 * rank-k Frobenius error ÷ the Eckart–Young optimum from the captured energies of two successive power
 * half-steps. Used by both finishes (range-projection.ts and reuse-finish.ts).
 */
import { symmetricEigenvalues } from './symmetric-eigen';

/**
 * Largest per-half-step contraction r̂ = (σ̂_l/σ̂_k)² the estimate uses: the remaining deficit is taken
 * as δ·r̂/(1 − r̂) ≤ 49·δ (a nearly flat spectrum converges slowly, but its optimum is large too).
 */
const MAX_CONTRACTION = 0.98;

/** Squared singular values of the upper-triangular l×l R, descending (eigenvalues of RᵀR). */
export function squaredSingularValues(R: Float64Array, l: number): Float64Array {
  const G = new Float64Array(l * l);
  for (let i = 0; i < l; i++)
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let p = 0; p <= j; p++) s += R[p * l + i] * R[p * l + j];
      G[i * l + j] = s;
      G[j * l + i] = s;
    }
  return symmetricEigenvalues(G, l).sort((x, y) => y - x);
}

/**
 * A-posteriori estimate of ‖A − U·diag(s)·Vᵀ‖_F ÷ the Eckart–Young optimum (Σ_{i>k} σᵢ²)^{1/2}.
 *
 * `ey` are the squared singular values of AZ (Z orthonormal, the last power step's right basis) and `s`
 * the final σ̂ of B = QᵀA, Q = orth(AZ). Both are lower bounds on σᵢ(A) (interlacing), and σᵢ(B) ≥
 * σᵢ(QᵀAZ) = σᵢ(AZ), so the captured energy Σ_{i≤k} σᵢ² rises with every half-step toward its optimum
 * Σ_{i≤k} σᵢ(A)². Under the linear model of subspace iteration (each half-step shrinks the deficit by
 * about r = (σ_{l+1}/σ_k)²; HMT 2011 §4.5 and the power-scheme bound of Cor. 10.10 — the model is common
 * practice, not a theorem), the deficit left after the last half-step, whose gain was δ, is about
 * δ·r/(1 − r); r is estimated by (σ_l(AZ)/σ_k(AZ))², capped at MAX_CONTRACTION. The error is exactly
 * √(‖A‖² − Σ_{i≤k} ŝᵢ²) up to rounding. Differences are taken term by term, so f32 rounding (about
 * ε·σ₁ per σᵢ) does not swamp them.
 */
export function estimateRatio(
  ey: Float64Array,
  s: Float64Array,
  l: number,
  k: number,
  normA2: number,
): number {
  let delta = 0;
  let captured = 0;
  for (let i = 0; i < k; i++) {
    const si2 = s[i] * s[i];
    delta += si2 - ey[i];
    captured += si2;
  }
  delta = Math.max(0, delta);
  const r = ey[k - 1] > 0 ? Math.min(MAX_CONTRACTION, Math.max(0, ey[l - 1] / ey[k - 1])) : MAX_CONTRACTION;
  const deficit = (delta * r) / (1 - r);
  const err2 = Math.max(0, normA2 - captured);
  if (err2 === 0) return 1;
  const opt2 = err2 - deficit;
  return opt2 > 0 ? Math.sqrt(err2 / opt2) : Number.POSITIVE_INFINITY;
}
