/**
 * Optimal low-rank errors from a singular-value spectrum (Eckart–Young–Mirsky).
 *
 * References
 * - C. Eckart, G. Young, "The approximation of one matrix by another of lower rank", Psychometrika
 *   1(3):211–218, 1936. doi:10.1007/BF02288367. ‖A−A_k‖_F = sqrt(Σ_{i>k} σᵢ²).
 * - L. Mirsky, "Symmetric gauge functions and unitarily invariant norms", Quart. J. Math. 11:50–59, 1960.
 *   doi:10.1093/qmath/11.1.50. ‖A−A_k‖₂ = σ_{k+1}.
 *   (Both cited in this role by Halko, Martinsson & Tropp, SIAM Review 53(2), 2011, §10.)
 *
 * Spectra are non-increasing arrays s[0] ≥ s[1] ≥ … (σ₁ = s[0]). A spectrum may be truncated (only the
 * top singular values, e.g. from a randomized SVD); then pass the total energy ‖A‖_F² = Σ aᵢⱼ² (the sum
 * of squared samples) so the tail is known.
 */
import { invalidParameterError } from '../../contract';
import { psnrFromMse } from './psnr';

function checkRank(k: number): void {
  if (!(Number.isInteger(k) && k >= 0)) throw invalidParameterError('k', 'integer ≥ 0', k);
}

/** Σ_{i≥from} s[i]², summed from the smallest to the largest for accuracy. */
function tailEnergy(s: ArrayLike<number>, from: number): number {
  let sum = 0;
  for (let i = s.length - 1; i >= from; i--) sum += s[i] * s[i];
  return sum;
}

/**
 * Spectral-norm error of the best rank-k approximation: ‖A−A_k‖₂ = σ_{k+1} (s[k]); 0 when k ≥ rank.
 * @throws UsageError if k is not an integer ≥ 0.
 * @example spectralBound([5, 3, 1], 1) // 3
 */
export function spectralBound(s: ArrayLike<number>, k: number): number {
  checkRank(k);
  return k < s.length ? s[k] : 0;
}

/**
 * Frobenius-norm error of the best rank-k approximation: sqrt(Σ_{i>k} σᵢ²), summed small to large.
 * With `totalEnergy` (= ‖A‖_F², for a truncated spectrum) it is sqrt(max(0, totalEnergy − Σ_{i≤k} σᵢ²)).
 * @throws UsageError if k is not an integer ≥ 0, or k exceeds a truncated spectrum.
 * @example frobeniusOptimal([5, 3, 1], 1) // sqrt(10)
 */
export function frobeniusOptimal(s: ArrayLike<number>, k: number, totalEnergy?: number): number {
  checkRank(k);
  if (totalEnergy === undefined) return Math.sqrt(tailEnergy(s, k));
  if (k > s.length)
    throw invalidParameterError('k', `integer ≤ ${s.length} (the number of known singular values)`, k);
  let head = 0;
  for (let i = 0; i < k; i++) head += s[i] * s[i];
  return Math.sqrt(Math.max(0, totalEnergy - head));
}

/**
 * All optimal Frobenius errors at once: out[k] = sqrt(Σ_{i>k} σᵢ²) for k = 0…s.length (O(n)).
 * out[0] = ‖A‖_F; out[s.length] = 0.
 */
export function frobeniusOptimalCurve(s: ArrayLike<number>): Float64Array {
  const out = new Float64Array(s.length + 1);
  let sum = 0;
  for (let i = s.length - 1; i >= 0; i--) {
    sum += s[i] * s[i];
    out[i] = Math.sqrt(sum);
  }
  return out;
}

/**
 * Smallest rank k whose leading singular values capture at least `fraction` of the energy Σσᵢ²
 * (Frobenius energy), i.e. the smallest k with Σ_{i>k} σᵢ² ≤ (1 − fraction)·Σσᵢ².
 * Returns 0 for an all-zero spectrum. For a truncated spectrum pass `totalEnergy` (= ‖A‖_F²) so the
 * unknown tail counts as energy not yet captured.
 * @param fraction - in (0, 1], e.g. 0.9, 0.99, 0.999.
 * @returns the rank; -1 when a truncated spectrum (with totalEnergy) does not reach the fraction.
 * @throws UsageError if fraction is outside (0, 1].
 * @example energyRank([4, 3], 0.5) // 1 (16 of 25 captured by σ₁)
 */
export function energyRank(s: ArrayLike<number>, fraction: number, totalEnergy?: number): number {
  if (!(typeof fraction === 'number' && fraction > 0 && fraction <= 1))
    throw invalidParameterError('fraction', 'number in (0, 1]', fraction);
  const n = s.length;
  if (totalEnergy === undefined) {
    // Suffix sums small-to-large: tail[k] = Σ_{i≥k} σᵢ².
    const tail = new Float64Array(n + 1);
    for (let i = n - 1; i >= 0; i--) tail[i] = tail[i + 1] + s[i] * s[i];
    const total = tail[0];
    if (total === 0) return 0;
    const allowed = (1 - fraction) * total;
    for (let k = 0; k <= n; k++) if (tail[k] <= allowed) return k;
    return n;
  }
  if (!(totalEnergy >= 0)) throw invalidParameterError('totalEnergy', 'number ≥ 0', totalEnergy);
  if (totalEnergy === 0) return 0;
  const target = fraction * totalEnergy;
  let head = 0;
  for (let k = 0; k < n; k++) {
    if (head >= target) return k;
    head += s[k] * s[k];
  }
  return head >= target ? n : -1;
}

/**
 * PSNR in dB implied by a Frobenius error over `pixelCount` samples: 10·log10(MAX²·N / ‖E‖_F²).
 * Infinity when the error is 0. With frobeniusOptimal this is the optimal rank-k PSNR.
 * @example psnrFromFrobenius(16, 256, 255) // 48.1308036086791 (MSE = 256/256 = 1)
 */
export function psnrFromFrobenius(frobenius: number, pixelCount: number, maxValue: number): number {
  if (!(frobenius >= 0 && Number.isFinite(frobenius)))
    throw invalidParameterError('frobenius', 'finite number ≥ 0', frobenius);
  if (!(Number.isInteger(pixelCount) && pixelCount > 0))
    throw invalidParameterError('pixelCount', 'integer > 0', pixelCount);
  return psnrFromMse((frobenius * frobenius) / pixelCount, maxValue);
}

/**
 * Optimal rank-k PSNR: psnrFromFrobenius(frobeniusOptimal(s, k), pixelCount, maxValue).
 */
export function optimalRankPsnr(
  s: ArrayLike<number>,
  k: number,
  pixelCount: number,
  maxValue: number,
  totalEnergy?: number,
): number {
  return psnrFromFrobenius(frobeniusOptimal(s, k, totalEnergy), pixelCount, maxValue);
}

/**
 * Smallest rank whose optimal (Eckart–Young) PSNR reaches `minPsnrDb`. Uses the full spectrum.
 * Returns s.length if only full rank reaches it (PSNR = Infinity).
 */
export function rankForPsnr(
  s: ArrayLike<number>,
  minPsnrDb: number,
  pixelCount: number,
  maxValue: number,
): number {
  const curve = frobeniusOptimalCurve(s);
  for (let k = 0; k <= s.length; k++)
    if (psnrFromFrobenius(curve[k], pixelCount, maxValue) >= minPsnrDb) return k;
  return s.length;
}
