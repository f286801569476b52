// The noise model σ²(x) = a·x + b (Foi, Trimeche, Katkovnik & Egiazarian, IEEE TIP 17(10), 2008) and the
// generalized Anscombe transform with the closed-form approximation of its exact unbiased inverse
// (Mäkitalo & Foi, IEEE TIP 20(9), 2011 and 22(1), 2013). References and formulas: src-main/engine/clean/
// anscombe.ts, noise-level.ts and noise-model.ts.
import { describe, expect, it } from 'vitest';
import { checkCleanOptions } from '../../src-main/contract';
import { denoiseInProcess, finishClean, prepareClean } from '../../src-main/engine/clean';
import { closedFormInverse, gatForward, stabiliser } from '../../src-main/engine/clean/anscombe';
import { fitNoiseLevel } from '../../src-main/engine/clean/noise-level';
import { damage, fixtureGray, type Gray, poissonGaussian, psnr } from './helpers';

/** A smooth synthetic ramp 20…220 (left to right) with a slow vertical wave: many levels, no texture. */
function ramp(width = 256, height = 256): Gray {
  const data = new Float32Array(width * height);
  for (let y = 0; y < height; y++)
    for (let x = 0; x < width; x++)
      data[y * width + x] = 20 + (200 * x) / width + 10 * Math.sin((2 * Math.PI * y) / height);
  return { width, height, data };
}

describe('generalized Anscombe transform', () => {
  it('forward: f(z) = 2√(z/a + 3/8 + b/a²) (Starck, Murtagh & Bijaoui 1998), values by hand', () => {
    // a = 1, b = 0: the classical Anscombe 2√(z + 3/8); z = 10 → 2√10.375 = 6.442049363362563.
    expect(gatForward(10, stabiliser({ a: 1, b: 0 }, 1))).toBeCloseTo(6.442049363362563, 12);
    // a = 0.5, b = 1: z/a = 20, σ̃² = b/a² = 4 → 2√24.375 = 9.874208829065749; scale 3 multiplies it.
    expect(gatForward(10, stabiliser({ a: 0.5, b: 1 }, 3))).toBeCloseTo(3 * 9.874208829065749, 11);
    // b < 0 is an offset x₀ = −b/a: a = 2, b = −4 → x₀ = 2; z = 10 → 2√(8/2 + 3/8) = 2√4.375.
    expect(gatForward(10, stabiliser({ a: 2, b: -4 }, 1))).toBeCloseTo(2 * Math.sqrt(4.375), 12);
  });

  // E[f(z)] for z = Poisson(λ) + N(0, σ̃²), f(z) = 2√(max(0, z + 3/8 + σ̃²)): the "exact unbiased inverse"
  // maps these back to λ. Computed here by direct summation over the Poisson pmf and 80-point Gauss–Hermite
  // quadrature over the Gaussian (numpy 1.24.2, scipy 1.10.1 scipy.stats.poisson). The closed form is an
  // approximation: within 0.05 of λ for λ ≥ 0.5 in these cases, and exact asymptotically (D²/4 − 1/8 − σ̃²).
  const exact: Array<[number, number, number]> = [
    // [σ̃, λ, E f(z)]
    [0, 0.5, 1.741587],
    [0, 1, 2.186906],
    [0, 2, 2.92843],
    [0, 5, 4.527448],
    [0, 10, 6.36389],
    [0, 200, 28.293109],
    [0.5, 1, 2.367685],
    [0.5, 10, 6.441845],
    [1, 2, 3.52732],
    [1, 50, 14.300342],
    [2, 5, 6.038124],
    [2, 200, 28.574463],
  ];
  for (const [s, lambda, D] of exact)
    it(`closed-form inverse of E[f] at σ̃ = ${s}, λ = ${lambda} returns λ within 0.05`, () => {
      expect(Math.abs(closedFormInverse(D, s * s) - lambda)).toBeLessThan(0.05);
    });

  it('the closed form is Mäkitalo & Foi 2011 term by term at D = 3 (σ̃ = 0), by hand: 2.1026349', () => {
    // ¼·9 + ¼√1.5/3 − 11/8/9 + 5/8·√1.5/27 − 1/8 = 2.25 + 0.1020620726 − 0.1527777778 + 0.0283505757 − 0.125
    expect(closedFormInverse(3, 0)).toBeCloseTo(2.1026348705, 9);
  });

  it('values below E[f(0)] (a denoiser overshooting into the dark) map to 0, never to a spike', () => {
    for (const D of [0, 0.2, 0.5, 0.8, 1, 1.2]) expect(closedFormInverse(D, 0)).toBe(0);
  });
});

describe('noise level fit (Foi et al. 2008, robust variant)', () => {
  // b is the variance extrapolated to x = 0; below about 10 % of the variance at the darkest level of the
  // image (here x ≈ 20) it is not identifiable to 15 % (with a = 0.45, b = 4 the fit gives b = 2.74).
  it('recovers a and b within 15 % on seeded Poisson–Gaussian noise over a smooth ramp', () => {
    for (const [a, b, seed] of [
      [0.45, 16, 5],
      [1, 25, 6],
      [0.2, 9, 7],
    ]) {
      const img = ramp(512, 512);
      const f = fitNoiseLevel(poissonGaussian(img, a, b, seed), img.width, img.height, 255);
      expect(f).not.toBeNull();
      expect(Math.abs((f?.a ?? 0) / a - 1), `a for ${a},${b}`).toBeLessThan(0.15);
      expect(Math.abs((f?.b ?? 0) / b - 1), `b for ${a},${b}: ${f?.a} ${f?.b}`).toBeLessThan(0.15);
    }
  });

  it('recovers a within 15 % on camera.png (a photograph: texture is trimmed from above)', async () => {
    const img = await fixtureGray('camera.png');
    const f = fitNoiseLevel(poissonGaussian(img, 0.45, 4, 11), img.width, img.height, 255);
    expect(Math.abs((f?.a ?? 0) / 0.45 - 1)).toBeLessThan(0.15);
  });

  it('finds a = 0 for Gaussian noise, and auto keeps the Gaussian path (same output as gaussian)', async () => {
    const img = await fixtureGray('camera.png');
    const noisy = damage(img, { sigma: 10, seed: 3 });
    const f = fitNoiseLevel(noisy, img.width, img.height, 255);
    expect(f?.a).toBe(0);
    const input = {
      width: img.width,
      height: img.height,
      channels: 1 as const,
      bitDepth: 8 as const,
      planes: [noisy],
    };
    const run = (noiseModel: 'auto' | 'gaussian') => {
      const prep = prepareClean(input, { noise: 'auto', banding: 'off', noiseModel });
      return { prep, out: finishClean(input, prep, denoiseInProcess(prep, 1).planes).planes[0] };
    };
    const auto = run('auto');
    expect(auto.prep.noiseModel?.model).toBe('gaussian');
    expect(Buffer.from(auto.out.buffer).equals(Buffer.from(run('gaussian').out.buffer))).toBe(true);
  });
});

describe('clean under the noise model', () => {
  it('auto picks poisson-gaussian on signal-dependent noise and beats the Gaussian path there', async () => {
    const img = ramp(192, 192);
    const noisy = poissonGaussian(img, 0.8, 2, 21);
    const input = {
      width: img.width,
      height: img.height,
      channels: 1 as const,
      bitDepth: 8 as const,
      planes: [noisy],
    };
    const gain = (noiseModel: 'auto' | 'gaussian') => {
      const prep = prepareClean(input, { noise: 'auto', banding: 'off', noiseModel });
      const out = finishClean(input, prep, denoiseInProcess(prep, 1).planes).planes[0];
      return { model: prep.noiseModel?.model, gain: psnr(out, img.data) - psnr(noisy, img.data) };
    };
    const auto = gain('auto');
    expect(auto.model).toBe('poisson-gaussian');
    expect(auto.gain).toBeGreaterThan(gain('gaussian').gain);
  });

  it('contract: --noise A,B needs noise auto; gaussian refuses A,B; poisson-gaussian refuses SIGMA', () => {
    expect(checkCleanOptions({ noiseLevel: { a: 0.45, b: 4 } }).noiseLevel).toEqual({ a: 0.45, b: 4 });
    expect(() => checkCleanOptions({ noise: 5, noiseLevel: { a: 1, b: 1 } })).toThrow(/cannot be combined/);
    expect(() => checkCleanOptions({ noiseModel: 'gaussian', noiseLevel: { a: 1, b: 1 } })).toThrow(
      /gaussian takes/,
    );
    expect(() => checkCleanOptions({ noise: 5, noiseModel: 'poisson-gaussian' })).toThrow(
      /not --noise SIGMA/,
    );
    expect(() => checkCleanOptions({ noiseLevel: { a: -1, b: 4 } })).toThrow(/for noise/);
    expect(() => checkCleanOptions({ noiseModel: 'poisson' as never })).toThrow(/noise-model/);
  });
});
