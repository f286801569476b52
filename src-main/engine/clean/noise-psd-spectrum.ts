/**
 * What a measured noise autocovariance (noise-psd.ts) means for the denoiser: the noise variance of every
 * coefficient of a patch's 2-D DCT, and the power spectrum itself.
 *
 * The variance of the DCT coefficient (u, v) of a p×p patch of stationary noise with autocovariance r is the
 * quadratic form Σ C[u,y]·C[v,x]·C[u,y']·C[v,x']·r(y − y', x − x') over the patch (exact for any r that is 0
 * beyond the measured lags; p ≤ PSD_LAG + 1). Collaborative filtering of correlated noise uses these
 * per-coefficient variances in place of one σ²: Y. Mäkinen, L. Azzari, A. Foi, "Collaborative filtering of
 * correlated noise: exact transform-domain variance for improved shrinkage and patch matching", IEEE TIP
 * 29:8339–8354, 2020, doi:10.1109/TIP.2020.3014721 (their Sec. III, the transform-domain variances of the
 * 3-D group spectrum, here for the 2-D part only; the 1-D transform across the group is taken as white, as
 * in Dabov et al. 2007's treatment of overlapping patches).
 */
import type { NoisePsd } from './noise-psd';
import { dctMatrix } from './wiener-groups';

/**
 * Relative noise variance of each 2-D DCT coefficient of a p×p patch, index u·p + v (u along rows of the
 * patch, i.e. vertical frequency): variance / r(0), so the mean over the p² coefficients is exactly 1.
 * @throws RangeError when p exceeds lag + 1 (the autocovariance is not known that far).
 */
export function dctNoiseVariances(psd: NoisePsd, p: number): Float64Array {
  const L = psd.lag;
  if (p > L + 1) throw new RangeError(`patch ${p} needs lags up to ${p - 1}; measured up to ${L}`);
  const side = 2 * L + 1;
  const r0 = psd.autocov[L * side + L];
  const C = dctMatrix(p);
  const out = new Float64Array(p * p);
  // A_u[y, y'] = C[u,y]·C[u,y'] per axis; var(u,v) = Σ A_u[y,y']·A_v[x,x']·r(y−y', x−x').
  for (let u = 0; u < p; u++)
    for (let v = 0; v < p; v++) {
      let s = 0;
      for (let y = 0; y < p; y++)
        for (let y2 = 0; y2 < p; y2++) {
          const a = C[u * p + y] * C[u * p + y2];
          const row = (y - y2 + L) * side + L;
          for (let x = 0; x < p; x++)
            for (let x2 = 0; x2 < p; x2++) s += a * C[v * p + x] * C[v * p + x2] * psd.autocov[row + x - x2];
        }
      out[u * p + v] = s / r0;
    }
  return out;
}

/**
 * The normalised noise power spectrum S(ω)/r(0) = Σ_Δ ρ(Δ)·cos(ωy·Δy + ωx·Δx) at angular frequencies
 * (ωy, ωx) in radians per pixel (the DTFT of the measured autocorrelation; its mean over [−π, π]² is 1).
 */
export function noisePsdAt(psd: NoisePsd, wy: number, wx: number): number {
  const L = psd.lag;
  const side = 2 * L + 1;
  const r0 = psd.autocov[L * side + L];
  let s = 0;
  for (let dy = -L; dy <= L; dy++)
    for (let dx = -L; dx <= L; dx++) s += psd.autocov[(dy + L) * side + dx + L] * Math.cos(wy * dy + wx * dx);
  return s / r0;
}

/**
 * The variance of the finest 2-D Haar diagonal detail (a − b − c + d)/2 under the noise of `psd`, in the
 * plane's units squared: r(0) − r(0, 1) − r(1, 0) + (r(1, 1) + r(1, −1))/2 (its quadratic form on the 2×2
 * block). White noise of variance σ² gives σ², the 3×3 binomial kernel's noise 0.11·σ², the 5×5 Gaussian's
 * 0.05·σ²; it is the quantity the white-noise estimate (noise-estimate.ts) measures.
 */
export function haarDiagonalVariance(psd: NoisePsd): number {
  const L = psd.lag;
  const side = 2 * L + 1;
  const c = L * side + L;
  const r = psd.autocov;
  return r[c] - r[c + 1] - r[c + side] + (r[c + side + 1] + r[c + side - 1]) / 2;
}

/**
 * The variance of the 2-D Haar diagonal detail one scale coarser, on the scale of the finest one: (A − B − C + D)/2
 * of the means A, B, C, D of a 4×4 block's four 2×2 quadrants, times 2 (so white noise of variance σ² gives
 * σ², as noise-estimate.ts coarseNoiseSigma reads it): (1/16)·Σ wᵢ·wⱼ·r(i − j) over the block, w = +1 on the
 * top-left and bottom-right quadrants and −1 on the others.
 */
export function haarCoarseVariance(psd: NoisePsd): number {
  const L = psd.lag;
  const side = 2 * L + 1;
  const w = (y: number, x: number) => (y < 2 === x < 2 ? 1 : -1);
  let v = 0;
  for (let y = 0; y < 4; y++)
    for (let x = 0; x < 4; x++)
      for (let y2 = 0; y2 < 4; y2++)
        for (let x2 = 0; x2 < 4; x2++)
          v += w(y, x) * w(y2, x2) * psd.autocov[(y - y2 + L) * side + x - x2 + L];
  return v / 16;
}
