/**
 * Fallback denoiser: overlapping square tiles, each truncated at the Gavish–Donoho threshold, blended with
 * a periodic Hann (sin²) window. With a step of half the tile the windows sum to one in the interior
 * (the constant-overlap-add property); the weighted sum is divided by the summed weights, so borders are
 * exact too.
 *
 * References
 * - M. Gavish, D. L. Donoho, IEEE Trans. Inf. Theory 60(8), 2014: τ = λ*(β)·√n·σ, here β = 1 for square tiles.
 * - F. J. Harris, "On the use of windows for harmonic analysis with the discrete Fourier transform",
 *   Proc. IEEE 66(1):51–83, 1978 (Hann window; overlap-add at 50 %).
 */
import { jacobiSvd } from '../linalg';
import { thresholdKnownSigma } from './gavish-donoho';

export interface TileStats {
  tiles: number;
  rankSum: number;
  rankMin: number;
  rankMax: number;
}

/**
 * Automatic tile side from the noise level on the 8-bit scale (larger tiles average more noise). Fitted on:
 * the images bench/clean.bench.ts runs (test/fixtures/images camera, moon, page, text and samples/*,
 * σ = 5, 10, 20; first clean commit 87d461e).
 */
export function autoTileSize(sigma8: number): number {
  return sigma8 <= 10 ? 16 : sigma8 <= 25 ? 24 : 32;
}

export function denoiseTiles(
  plane: Float32Array,
  width: number,
  height: number,
  sigma: number,
  tile: number,
  fixed: { rank?: number; threshold?: number } = {},
): { plane: Float32Array; stats: TileStats; threshold: number } {
  const T = Math.max(2, Math.min(tile, width, height));
  const step = Math.max(1, T >> 1);
  const num = new Float64Array(width * height);
  const den = new Float64Array(width * height);
  const win = new Float64Array(T);
  for (let i = 0; i < T; i++) win[i] = Math.sin((Math.PI * (i + 0.5)) / T) ** 2;
  const tau = fixed.threshold ?? thresholdKnownSigma(T, T, sigma);
  const stats: TileStats = { tiles: 0, rankSum: 0, rankMin: Number.POSITIVE_INFINITY, rankMax: 0 };
  const starts = (len: number) => {
    const out: number[] = [];
    for (let v = -step; v < len; v += step) out.push(Math.max(0, Math.min(v, len - T)));
    return [...new Set(out)];
  };
  const data = new Float64Array(T * T);
  for (const y0 of starts(height))
    for (const x0 of starts(width)) {
      let mean = 0;
      for (let i = 0; i < T; i++)
        for (let j = 0; j < T; j++) mean += data[i * T + j] = plane[(y0 + i) * width + x0 + j];
      mean /= T * T;
      for (let k = 0; k < T * T; k++) data[k] -= mean;
      const { s, U, V } = jacobiSvd({ rows: T, cols: T, data });
      let r = 0;
      if (fixed.rank !== undefined) r = Math.min(fixed.rank, s.length);
      else while (r < s.length && s[r] > tau) r++;
      stats.tiles++;
      stats.rankSum += r;
      stats.rankMin = Math.min(stats.rankMin, r);
      stats.rankMax = Math.max(stats.rankMax, r);
      const kU = U.cols;
      const kV = V.cols;
      for (let i = 0; i < T; i++)
        for (let j = 0; j < T; j++) {
          let v = mean;
          for (let q = 0; q < r; q++) v += U.data[i * kU + q] * s[q] * V.data[j * kV + q];
          const w = win[i] * win[j] + 1e-9;
          const o = (y0 + i) * width + x0 + j;
          num[o] += w * v;
          den[o] += w;
        }
    }
  const out = new Float32Array(width * height);
  for (let i = 0; i < out.length; i++) out[i] = den[i] > 0 ? num[i] / den[i] : plane[i];
  if (stats.tiles === 0) stats.rankMin = 0;
  return { plane: out, stats, threshold: tau };
}
