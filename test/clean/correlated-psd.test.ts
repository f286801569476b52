// The noise power spectrum measured from flat blocks (engine/clean/noise-psd.ts), its DCT-domain variances
// (noise-psd-spectrum.ts) and the white/correlated decision. References are analytic: the DTFT of the known
// filter kernel (|H(ω)|²/Σh² for white noise through h), and the exact quadratic form of its autocorrelation.
import { describe, expect, it } from 'vitest';
import { checkCleanOptions } from '../../src-main/contract';
import { estimateNoiseSigma } from '../../src-main/engine/clean/noise-estimate';
import { estimateNoisePsd, type NoisePsd } from '../../src-main/engine/clean/noise-psd';
import {
  dctNoiseVariances,
  haarDiagonalVariance,
  noisePsdAt,
} from '../../src-main/engine/clean/noise-psd-spectrum';
import { analyticPsd, BINOMIAL_3, filteredNoise, GAUSSIAN_5, kernelPsd } from './correlated-noise';
import { damage, fixtureGray } from './helpers';

const SIDE = 512;
/** Pure filtered noise of σ 10 around mid-grey, rounded to 8 bits (far from the clip levels). */
function noisePlane(g: number[], seed: number): Float32Array {
  const n = filteredNoise(SIDE, SIDE, g, 10, seed);
  return Float32Array.from(n, (v) => Math.round(128 + v));
}

const kernels: Array<[string, number[], number]> = [
  // Flatness 1/Σρ² from the kernels' autocorrelations: binomial (1 + 2·(4/6)² + 2·(1/6)²)⁻² = 0.2645;
  // Gaussian σ_k = 1 on 5 taps, 0.16 (computed by analyticPsd below and pinned here to two digits).
  ['3×3 binomial', BINOMIAL_3, 0.2645],
  ['5×5 Gaussian σ_k = 1', GAUSSIAN_5, 0.16],
];

describe('measured noise spectrum of filtered white noise', () => {
  for (const [name, g, flat] of kernels)
    it(`${name}: spectrum, σ, flatness and DCT variances match the kernel's`, () => {
      const psd = estimateNoisePsd(noisePlane(g, 7), SIDE, SIDE, 0, 255) as NoisePsd;
      expect(psd).not.toBeNull();
      // σ per pixel is 10 by construction (plus 1/12 of rounding variance); ~1000 blocks give ±1 %.
      expect(psd.sigma).toBeGreaterThan(9.8);
      expect(psd.sigma).toBeLessThan(10.2);
      expect(Math.abs(psd.flatness - flat)).toBeLessThan(0.02);
      expect(psd.correlated).toBe(true);
      // Tolerance: 6 % of the spectrum's peak |H(0)|²/Σh² (7.1 and 12.1) at every frequency of a 16×16 grid;
      // measured worst 4.5 % (binomial) and 4.1 % (Gaussian) at this seed.
      const peak = kernelPsd(g, 0, 0);
      for (let a = -8; a < 8; a++)
        for (let b = -8; b < 8; b++) {
          const wy = (Math.PI * a) / 8;
          const wx = (Math.PI * b) / 8;
          expect(Math.abs(noisePsdAt(psd, wy, wx) - kernelPsd(g, wy, wx))).toBeLessThan(0.06 * peak);
        }
      // DCT variances of 6×6 patches against the exact ones of the analytic autocorrelation: within 6 % of the largest.
      const want = dctNoiseVariances(analyticPsd(g, psd.lag), 6);
      const got = dctNoiseVariances(psd, 6);
      const top = Math.max(...want);
      for (let q = 0; q < 36; q++) expect(Math.abs(got[q] - want[q])).toBeLessThan(0.06 * top);
    });

  it('DCT variances of white noise are all 1, and any spectrum averages to exactly 1', () => {
    const white = analyticPsd([1], 7);
    for (const v of dctNoiseVariances(white, 8)) expect(v).toBeCloseTo(1, 12);
    const bin = dctNoiseVariances(analyticPsd(BINOMIAL_3, 7), 7);
    expect(bin.reduce((a, v) => a + v, 0) / 49).toBeCloseTo(1, 12);
    // Low frequencies carry the filtered noise, the highest almost none (the binomial zero at Nyquist).
    expect(bin[0]).toBeGreaterThan(4);
    expect(bin[48]).toBeLessThan(0.01);
  });

  it("the finest Haar diagonal's variance: exact for the kernels, and what the white-noise estimate measures", () => {
    // White: σ²; binomial: (1 − ρ(1))² with ρ(1) = 4/6 per axis, so 1/9 (from the kernel's autocorrelation).
    expect(haarDiagonalVariance(analyticPsd([1], 7))).toBeCloseTo(1, 12);
    expect(haarDiagonalVariance(analyticPsd(BINOMIAL_3, 7))).toBeCloseTo(1 / 9, 12);
    // Noise alone: the measured spectrum's prediction and the robust fine-scale estimate agree (noise-psd-plan.ts
    // bounds the spectrum by this agreement); 0.98–1.01 measured on flat planes with other seeds.
    for (const g of [BINOMIAL_3, GAUSSIAN_5]) {
      const plane = noisePlane(g, 11);
      const psd = estimateNoisePsd(plane, SIDE, SIDE, 0, 255) as NoisePsd;
      const white = estimateNoiseSigma(plane, SIDE, SIDE, 0, 255);
      const ratio = haarDiagonalVariance(psd) / (white * white);
      expect(ratio).toBeGreaterThan(0.9);
      expect(ratio).toBeLessThan(1.1);
    }
  });

  it('refuses patches beyond the measured lags, and measures nothing on a plane without flat blocks', () => {
    expect(() => dctNoiseVariances(analyticPsd(BINOMIAL_3, 7), 9)).toThrow(/patch 9 needs lags up to 8/);
    expect(estimateNoisePsd(new Float32Array(40 * 40).fill(255), 40, 40, 0, 255)).toBeNull();
  });
});

describe('white or correlated', () => {
  it('white noise stays white on the fixtures at σ 2, 5 and 20', async () => {
    for (const f of ['camera.png', 'moon.png', 'page.png', 'text.png', 'phantom.png']) {
      const t = await fixtureGray(f);
      for (const sigma of [2, 5, 20]) {
        const psd = estimateNoisePsd(damage(t, { sigma, seed: 3 }), t.width, t.height, 0, 255);
        expect(psd?.correlated, `${f} σ ${sigma}`).toBe(false);
      }
    }
  }, 60_000);

  it('filtered noise is correlated on the fixtures, with σ per pixel within 15 %', async () => {
    for (const f of ['camera.png', 'moon.png', 'text.png']) {
      const t = await fixtureGray(f);
      for (const [name, g] of kernels) {
        const n = filteredNoise(t.width, t.height, g, 5, 5);
        const noisy = t.data.map((v, i) => Math.min(255, Math.max(0, Math.round(v + n[i]))));
        const psd = estimateNoisePsd(noisy, t.width, t.height, 0, 255);
        expect(psd?.correlated, `${f} ${name}`).toBe(true);
        // text.png's flat blocks still hold texture: measured 7.5 there, 5.2–5.6 on the others.
        if (f !== 'text.png') expect(Math.abs((psd?.sigma ?? 0) / 5 - 1)).toBeLessThan(0.15);
      }
    }
  }, 60_000);
});

describe('--noise-colour', () => {
  it('is checked like every option', () => {
    expect(() => checkCleanOptions({ noise: 'auto', noiseColour: 'pink' as never })).toThrow(/noise-colour/);
    expect(checkCleanOptions({ noiseColour: 'measured' }).noiseColour).toBe('measured');
  });
});
