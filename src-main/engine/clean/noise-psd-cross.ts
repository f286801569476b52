/**
 * Correlated noise shared by the patches of one group. Block matching takes the nearest similar patches first,
 * so on smooth content a group is mostly patches a few pixels apart, and correlated noise is then correlated
 * from patch to patch too: the group's average (the first coefficient of the 1-D transform across the group,
 * Haar or DCT, both (1/√n)·Σ) carries more noise than one patch's variance, which the Wiener pass assumed.
 * Its exact variance follows from the measured autocovariance r:
 *
 *   Var((1/√n)·Σₖ Y_q(k)) = (1/n)·Σₖ Σₖ' c_q(pₖ − pₖ'),  c_q(Δ) = Σ_δ A_u(δy)·A_v(δx)·ρ(Δ + δ),
 *
 * with Y_q(k) the 2-D DCT coefficient q = u·p + v of patch k at position pₖ, ρ = r/r(0) and A_u(δ) = Σ C[u,y]·C[u,y+δ]
 * the autocorrelation of DCT row u; c_q(0) is noise-psd-spectrum.ts's per-coefficient variance. The other
 * coefficients across the group keep that variance (the detail coefficients see less noise with positive
 * correlation, so keeping it is the safe side). After Y. Mäkinen, L. Azzari, A. Foi, IEEE TIP 29:8339–8354,
 * 2020 (exact transform-domain variances of the 3-D group spectrum, their Sec. III; here for the group average
 * only).
 *
 * What the Wiener pass uses (WIENER_AVERAGE) is bounded, for a measured reason. The exact variance is exact for
 * the noise the autocovariance describes; the measurement reads flat blocks, and on a scan whose own content is
 * fine texture it takes that texture for noise too (text.png alone, no noise added: σ 4.1 by noise-psd.ts; with
 * binomial noise of σ 5 it measures 7.06). Every extra unit of shrinkage then removes content: text.png,
 * binomial σ 5, gain 1.421 dB with the per-patch variance, 1.358 with the exact one, but 2.161 against 2.162 when
 * told the true σ 5, so the exact variance itself costs nothing there. Bounding the group average's variance
 * by AVERAGE_CAP times one patch's, and only for the lowest frequencies, keeps most of the gain where the noise
 * is what was measured (moon.png binomial σ 10: 7.755 → 7.844 dB, exact 8.001) and loses little where it is
 * not (text.png binomial σ 5: 1.421 → 1.416). The low-frequency corner alone carries the effect (3×3 of 8×8
 * coefficients: moon 7.874 against 7.875 with all 64, both with the bound) at a seventh of the cost.
 */
import type { NoisePsd } from './noise-psd';
import { dctMatrix } from './wiener-groups';

/**
 * c_q(Δ) for |Δy|, |Δx| ≤ reach (beyond, 0) and the coefficients q = u·p + v with u, v < band:
 * table[((Δy + reach)·(2·reach + 1) + Δx + reach)·band² + u·band + v]; the group average's variance is at most
 * cap times c_q(0).
 */
export interface PatchCrossCovariance {
  p: number;
  band: number;
  cap: number;
  reach: number;
  table: Float64Array;
}

/**
 * The Wiener pass's choice (see the file comment): the 3×3 lowest DCT frequencies, and at most 1.5 times one
 * patch's variance. Both chosen here on the bench's correlated cases (moon.png and text.png, binomial 3×3 and
 * Gaussian 5×5, σ 5 and 10): caps 1.25, 1.5, 2 and ∞ gave moon binomial σ 10 7.82, 7.84, 7.93, 8.00 dB and text
 * binomial σ 5 1.418, 1.416, 1.398, 1.358 dB (the last two below scikit-image's NL-means, 1.404).
 */
export const WIENER_AVERAGE = { band: 3, cap: 1.5 } as const;

/**
 * The cross-covariance table of p×p patches' DCT coefficients under the noise of `psd` (relative to r(0)), for
 * the band × band lowest frequencies (default all) and a bound `cap` on the group average (default none).
 */
export function patchCrossCovariance(
  psd: NoisePsd,
  p: number,
  { band = p, cap = Number.POSITIVE_INFINITY }: { band?: number; cap?: number } = {},
): PatchCrossCovariance {
  const L = psd.lag;
  const side = 2 * L + 1;
  const r0 = psd.autocov[L * side + L];
  const rho = (dy: number, dx: number) =>
    Math.abs(dy) > L || Math.abs(dx) > L ? 0 : psd.autocov[(dy + L) * side + dx + L] / r0;
  const C = dctMatrix(p);
  const nb = Math.min(band, p);
  // A[u][δ + p − 1] = Σ_y C[u, y]·C[u, y + δ].
  const A = Array.from({ length: nb }, (_, u) =>
    Float64Array.from({ length: 2 * p - 1 }, (_, j) => {
      const d = j - (p - 1);
      let s = 0;
      for (let y = Math.max(0, -d); y < Math.min(p, p - d); y++) s += C[u * p + y] * C[u * p + y + d];
      return s;
    }),
  );
  const reach = L + p - 1;
  const w = 2 * reach + 1;
  const mb = nb * nb;
  const table = new Float64Array(w * w * mb);
  for (let Dy = -reach; Dy <= reach; Dy++)
    for (let Dx = -reach; Dx <= reach; Dx++) {
      const o = ((Dy + reach) * w + Dx + reach) * mb;
      for (let u = 0; u < nb; u++)
        for (let v = 0; v < nb; v++) {
          let s = 0;
          for (let a = 0; a < 2 * p - 1; a++) {
            const ay = A[u][a];
            for (let b = 0; b < 2 * p - 1; b++) s += ay * A[v][b] * rho(Dy + a - p + 1, Dx + b - p + 1);
          }
          table[o + u * nb + v] = s;
        }
    }
  return { p, band: nb, cap, reach, table };
}

/**
 * out[q] = the noise variance of the group average of coefficient q relative to r(0): for the table's band,
 * min(cap·d[q], (1/n)·Σₖ Σₖ' c_q(pₖ − pₖ')) with c_q(0) taken as d[q] (the spectrum the Wiener pass uses);
 * elsewhere d[q]. `pairs`: scratch of at least n·(n − 1)/2 table offsets.
 */
export function groupAverageVariances(
  cov: PatchCrossCovariance,
  spectrum: ArrayLike<number>,
  count: number,
  posY: Int32Array,
  posX: Int32Array,
  out: Float64Array,
  pairs = new Int32Array((count * (count - 1)) / 2),
): Float64Array {
  const { p, band, cap, reach, table } = cov;
  const w = 2 * reach + 1;
  const mb = band * band;
  for (let q = 0; q < p * p; q++) out[q] = spectrum[q];
  // The table rows of the pairs that share noise (offset within reach), then one sum per coefficient.
  let np = 0;
  for (let k = 0; k < count; k++)
    for (let j = k + 1; j < count; j++) {
      const dy = posY[k] - posY[j];
      const dx = posX[k] - posX[j];
      if (dy <= reach && dy >= -reach && dx <= reach && dx >= -reach)
        pairs[np++] = ((dy + reach) * w + dx + reach) * mb;
    }
  for (let u = 0; u < band; u++)
    for (let v = 0; v < band; v++) {
      const i = u * band + v;
      let s = 0;
      for (let t = 0; t < np; t++) s += table[pairs[t] + i];
      const d = spectrum[u * p + v];
      out[u * p + v] = Math.min(cap * d, d + (2 * s) / count);
    }
  return out;
}
