/**
 * Spatially correlated test noise for the correlated-noise tests: white N(0, 1) through a known separable
 * kernel, scaled so the pixel standard deviation is σ, and the kernel's analytic power spectrum.
 */
import type { NoisePsd } from '../../src-main/engine/clean/noise-psd';
import { gaussian, rng } from './helpers';

/** [1 2 1]/4: the 3×3 binomial kernel is its outer product (common practice). */
export const BINOMIAL_3 = [0.25, 0.5, 0.25];
/** Sampled Gaussian of σ_k = 1 on 5 taps, normalised to sum 1; the 5×5 kernel is its outer product. */
export const GAUSSIAN_5 = (() => {
  const g = [-2, -1, 0, 1, 2].map((t) => Math.exp(-(t * t) / 2));
  const s = g.reduce((a, b) => a + b, 0);
  return g.map((v) => v / s);
})();

/**
 * width × height noise: white N(0, 1) filtered by the separable kernel g ⊗ g (valid part of a larger field,
 * so every sample sees the full kernel), times σ / √(Σh²) so that its standard deviation is σ.
 */
export function filteredNoise(width: number, height: number, g: number[], sigma: number, seed: number) {
  const t = g.length;
  const W = width + t - 1;
  const H = height + t - 1;
  const next = gaussian(rng(seed));
  const white = new Float64Array(W * H);
  for (let i = 0; i < white.length; i++) white[i] = next();
  const rows = new Float64Array(W * height);
  for (let y = 0; y < height; y++)
    for (let x = 0; x < W; x++) {
      let s = 0;
      for (let k = 0; k < t; k++) s += g[k] * white[(y + k) * W + x];
      rows[y * W + x] = s;
    }
  const energy = g.reduce((a, v) => a + v * v, 0) ** 2;
  const scale = sigma / Math.sqrt(energy);
  const out = new Float64Array(width * height);
  for (let y = 0; y < height; y++)
    for (let x = 0; x < width; x++) {
      let s = 0;
      for (let k = 0; k < t; k++) s += g[k] * rows[y * W + x + k];
      out[y * width + x] = s * scale;
    }
  return out;
}

/** |H(ωy, ωx)|² / Σh² of the separable kernel g ⊗ g: the normalised spectrum of the noise above (its DTFT). */
export function kernelPsd(g: number[], wy: number, wx: number): number {
  const c = (g.length - 1) / 2;
  const G = (w: number) => g.reduce((a, v, k) => a + v * Math.cos(w * (k - c)), 0);
  const energy = g.reduce((a, v) => a + v * v, 0) ** 2;
  return (G(wy) * G(wx)) ** 2 / energy;
}

/** The analytic autocovariance of white noise (σ² = 1 after filtering) through g ⊗ g, as a NoisePsd. */
export function analyticPsd(g: number[], lag: number): NoisePsd {
  const side = 2 * lag + 1;
  const energy = g.reduce((a, v) => a + v * v, 0);
  const r1 = (d: number) => g.reduce((a, v, k) => a + v * (g[k + Math.abs(d)] ?? 0), 0) / energy;
  const autocov = new Float64Array(side * side);
  for (let dy = -lag; dy <= lag; dy++)
    for (let dx = -lag; dx <= lag; dx++) autocov[(dy + lag) * side + dx + lag] = r1(dy) * r1(dx);
  return { lag, autocov, sigma: 1, blocks: 0, flatness: 0, highShare: 0, lagOne: 0, correlated: true };
}
