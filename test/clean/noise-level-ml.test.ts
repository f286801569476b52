// The maximum-likelihood fit of σ²(x) = a·x + b over level sets (Foi, Trimeche, Katkovnik & Egiazarian,
// IEEE TIP 17(10), 2008, Sec. IV; src-main/engine/clean/noise-level-ml.ts) and the stability of the model
// choice of `--noise auto` (src-main/engine/clean/noise-model.ts).
import { describe, expect, it } from 'vitest';
import { fitLevelsTrimmed, type NoiseLevelPoint } from '../../src-main/engine/clean/noise-level-ml';
import { planNoiseModel } from '../../src-main/engine/clean/noise-model';
import { damage, fixtureGray, gaussian, poissonGaussian, rng } from './helpers';

/** Level sets at 20, 30, …, 220 with `count` blocks each and σ̂² = v·(1 + e), e from `noise` (or 0). */
function levels(a: number, b: number, count: number, noise?: () => number): NoiseLevelPoint[] {
  const out: NoiseLevelPoint[] = [];
  for (let x = 20; x <= 220; x += 10) {
    const v = a * x + b;
    // The spread of a median-based σ̂²: √(4·1.36/n) relative (derivation in the source's header; a seeded
    // numpy 1.24.2 simulation of 20 000 medians of n = 1024 |N(0,1)| gives n·Var σ̂² = 5.44).
    const e = noise ? noise() * Math.sqrt((4 * 1.36) / count) : 0;
    out.push({ level: x, sigma: Math.sqrt(v * (1 + e)), count, used: true });
  }
  return out;
}

describe('maximum-likelihood fit of the level sets', () => {
  // The likelihood's log v term makes the maximum sit slightly below noise-free points (by about c/n
  // relative, c = 4·1.36): on noisy points it is cancelled on average by the residuals, see the trials below.
  it('points exactly on the model give it back within c/n = 1.4 % (a = 0.45, b = 4, n = 400)', () => {
    const f = fitLevelsTrimmed(levels(0.45, 4, 400));
    expect(Math.abs((f?.a ?? 0) / 0.45 - 1)).toBeLessThan(0.014);
    expect(Math.abs((f?.b ?? 0) / 4 - 1)).toBeLessThan(0.014);
  });

  it('constant variance y = 10: a = 0, b solves y·(y − b) = k·b² (k = c/n), seB = 1/√(Σ n/(c·b²) + 2/b²)', () => {
    // ∂/∂v of Σ n(y − v)²/(2c·v²) + log v = 0 with every y = 10 gives y(y − v) = k v², by hand:
    // v = y(√(1 + 4k) − 1)/(2k) = 9.86758 for k = 5.44/400.
    const k = 5.44 / 400;
    const v = (10 * (Math.sqrt(1 + 4 * k) - 1)) / (2 * k);
    const f = fitLevelsTrimmed(levels(0, 10, 400));
    expect(f?.a).toBe(0);
    expect(f?.b).toBeCloseTo(v, 6);
    expect(f?.seB).toBeCloseTo(1 / Math.sqrt(21 * (400 / (5.44 * v * v) + 2 / (v * v))), 6);
  });

  it('a level set far above the fit (texture) is dropped, and the others give the model back', () => {
    const pts = levels(0.2, 2, 400);
    pts[7].sigma *= 2;
    const f = fitLevelsTrimmed(pts);
    expect(pts[7].used).toBe(false);
    expect(pts.filter((p) => p.used).length).toBe(pts.length - 1);
    expect(Math.abs((f?.a ?? 0) / 0.2 - 1)).toBeLessThan(0.014);
  });

  it('the standard errors are honest: a and b fall within 2 SE of the truth in 90–99 % of 400 seeded trials', () => {
    const g = gaussian(rng(77));
    let inA = 0;
    let inB = 0;
    let sumA = 0;
    const trials = 400;
    for (let t = 0; t < trials; t++) {
      const f = fitLevelsTrimmed(levels(0.45, 4, 300, g));
      if (!f) continue;
      sumA += f.a;
      if (Math.abs(f.a - 0.45) <= 2 * f.seA) inA++;
      if (Math.abs(f.b - 4) <= 2 * f.seB) inB++;
    }
    // Unbiased on average: the mean of a over the trials is within 1 % of the truth.
    expect(Math.abs(sumA / trials / 0.45 - 1)).toBeLessThan(0.01);
    // A normal estimate is within 2 SE 95.4 % of the time (standard normal table).
    for (const share of [inA / trials, inB / trials]) {
      expect(share).toBeGreaterThan(0.9);
      expect(share).toBeLessThan(0.99);
    }
  });

  it('b below 0 by less than 2 SE is held at 0: a through the origin (scipy), seB that of the free fit', () => {
    // Points exactly on 1·x − 2, n = 100: the free fit puts b at −1.90 (scipy 1.10.1 Nelder–Mead on the same
    // −log L: a = 0.9508, b = −1.9016), within 2 SE of 0; with b = 0 the maximum is at a = 0.9269058388965571
    // (scipy 1.10.1 optimize.minimize_scalar, bounded, xatol 1e-12, c = 5.44).
    const f = fitLevelsTrimmed(levels(1, -2, 100));
    expect(f?.b).toBe(0);
    expect(f?.a).toBeCloseTo(0.9269058388965571, 6);
    expect(f?.seB ?? 0).toBeGreaterThan(1.9016 / 2);
    expect(f?.covAB).toBe(0);
  });

  it('b below 0 by more than 2 SE (a black-level offset) is kept', () => {
    const f = fitLevelsTrimmed(levels(1, -15, 400));
    expect(Math.abs((f?.b ?? 0) / -15 - 1)).toBeLessThan(0.03);
    expect(f?.b ?? 0).toBeLessThan(-2 * (f?.seB ?? 0));
  });

  it('fewer than three usable level sets give no fit', () => {
    const pts = levels(0.2, 2, 400).slice(0, 2);
    expect(fitLevelsTrimmed(pts)).toBeNull();
  });
});

describe('the model choice of --noise auto does not follow the noise of the fit', () => {
  it('camera.png: Poisson–Gaussian 0.45·x + 4 picks poisson-gaussian for 4 noise seeds; Gaussian σ = 6 picks gaussian', async () => {
    const img = await fixtureGray('camera.png');
    const plan = (noisy: Float32Array) =>
      planNoiseModel([noisy], ['gray'], img.width, img.height, 255, { noise: 'auto' }).report?.model;
    for (const seed of [1, 2, 3, 4]) {
      expect(plan(poissonGaussian(img, 0.45, 4, seed))).toBe('poisson-gaussian');
      expect(plan(damage(img, { sigma: 6, seed }))).toBe('gaussian');
    }
  });
});
