// Level sets at the clipping limits (src-main/engine/clean/noise-level-limits.ts), the ring statistic they are
// tested with (noise-flat.ts) and the rounded clipped model they are fitted through (noise-clip.ts): reference
// values from numpy 1.24.2 / scipy 1.10.1 (/usr/bin/python3), and the fit on a scan with a black background.
import { describe, expect, it } from 'vitest';
import { roundedClippedMoments } from '../../src-main/engine/clean/noise-clip';
import { haarBlocks } from '../../src-main/engine/clean/noise-estimate';
import { flatnessStatistic } from '../../src-main/engine/clean/noise-flat';
import { fitNoiseLevel } from '../../src-main/engine/clean/noise-level';
import { limitPoints, ringMeans } from '../../src-main/engine/clean/noise-level-limits';
import { type Gray, gaussian, poissonGaussian, rng } from './helpers';

/** Fractional error of the erfc behind Φ (Numerical Recipes' erfcc, below 1.2e-7), with room for the sums. */
const CDF_TOLERANCE = 5e-6;

describe('rounded clipped moments', () => {
  // scipy 1.10.1: k = arange(0, 256); c = norm.cdf((k + 0.5 − μ)/s), c[−1] = 1; p = diff([0, c]);
  // mean = Σ p·k, variance = Σ p·(k − mean)², s² = σ² − 1/12 (the argument σ² includes the rounding).
  const ref: Array<[number, number, number, number]> = [
    [0, 2, 0.5522569667936503, 0.7366789092945412],
    [1, 2, 1.1904201618777686, 1.3672436335329898],
    [-0.5, 4, 0.5645776938950754, 1.033341000327714],
    [2, 9, 2.4489141535056533, 5.6995715330160275],
    [253, 6, 252.71888848525597, 4.192208288049034],
    [100, 3, 100.0, 3.083333333333333],
  ];
  it('match scipy for round(N(μ, s²)) clipped to 0…255', () => {
    for (const [mu, s2, mean, variance] of ref) {
      const m = roundedClippedMoments(mu, Math.sqrt(s2 + 1 / 12), 255);
      expect(Math.abs(m.mean - mean), `mean at μ ${mu}, s² ${s2}`).toBeLessThan(CDF_TOLERANCE * (1 + mean));
      expect(Math.abs(m.variance / variance - 1), `variance at μ ${mu}, s² ${s2}`).toBeLessThan(
        CDF_TOLERANCE,
      );
    }
  });
});

describe('ring statistic (plane fit over the eight neighbouring LL values, without the centre)', () => {
  it('matches numpy np.linalg.lstsq on the 8-point ring', () => {
    // The 10×8 plane of noise-flat.test.ts, p(x, y) = ((37x + 11y) mod 23) + xy/2; numpy 1.24.2:
    // A = [1, dx, dy] over the ring (dx, dy) ≠ (0, 0), rss = Σ(v − A·lstsq(A, v))².
    const p = new Float32Array(80);
    for (let y = 0; y < 8; y++)
      for (let x = 0; x < 10; x++) p[y * 10 + x] = ((x * 37 + y * 11) % 23) + 0.5 * x * y;
    const { ring } = flatnessStatistic(haarBlocks(p, 10, 8)!);
    expect(ring[1 * 5 + 1]).toBeCloseTo(152.16666666666663, 9);
    expect(ring[1 * 5 + 2]).toBeCloseTo(157.67708333333326, 9);
    expect(ring[2 * 5 + 3]).toBeCloseTo(175.8854166666665, 9);
    expect(ring[0]).toBe(Number.POSITIVE_INFINITY);
  });

  it('does not depend on the centre block: changing its four pixels leaves it as it was (up to float rounding)', () => {
    const g = gaussian(rng(8));
    const w = 16;
    const p = new Float32Array(w * w).map(() => 40 + 3 * g());
    const first = flatnessStatistic(haarBlocks(p, w, w)!);
    const before = first.ring[3 * 8 + 3];
    const statBefore = first.stat[3 * 8 + 3];
    for (const k of [6 * w + 6, 6 * w + 7, 7 * w + 6, 7 * w + 7]) p[k] += 25;
    // The ring RSS is Σv² − c² − … with the centre c added and taken out again: equal to ~1e-12 relative.
    const after = flatnessStatistic(haarBlocks(p, w, w)!);
    expect(after.ring[3 * 8 + 3]).toBeCloseTo(before, 8);
    // The full statistic does move: it includes the centre's LL (a step of 25 against noise σ = 3).
    expect(after.stat[3 * 8 + 3]).toBeGreaterThan(statBefore + 100);
  });
});

describe('level sets at a limit', () => {
  it('a flat region at 0 reads the variance of the rounded clipped noise (scipy 0.73668 for σ² = 2)', () => {
    const g = gaussian(rng(12));
    const w = 256;
    const plane = new Float32Array(w * w).map(() => Math.max(0, Math.round(Math.SQRT2 * g())));
    const blocks = haarBlocks(plane, w, w)!;
    const { total, ring } = flatnessStatistic(blocks);
    const ids = Int32Array.from(blocks.idx).filter((i) => Number.isFinite(ring[i]));
    const points = limitPoints(blocks, ringMeans(blocks, total, ids), ids, 255);
    expect(points.length).toBe(4);
    let n = 0;
    let v = 0;
    for (const p of points) {
      expect(p.used).toBe(false);
      n += p.count;
      v += p.count * p.sigma * p.sigma;
    }
    // 16 129 blocks; HH² of clipped noise has n·Var/σ⁴ of about 5 (its `spread`): SE of the mean ≈ 1.8 %.
    expect(Math.abs(v / n / 0.7366789092945412 - 1)).toBeLessThan(0.06);
    for (const p of points) expect(p.spread!).toBeGreaterThan(2);
  });

  /** 60 % black background, a square at 50 and an inner square at 80, like a phantom on black. */
  function onBlack(w = 320): Gray {
    const data = new Float32Array(w * w);
    for (let y = 0; y < w; y++)
      for (let x = 0; x < w; x++) {
        const r = Math.max(Math.abs(x - w / 2), Math.abs(y - w / 2));
        data[y * w + x] = r < w / 6 ? 80 : r < w * 0.32 ? 50 : 0;
      }
    return { width: w, height: w, data };
  }

  // Before the limit sets, scikit-image's Shepp–Logan phantom (58 % black) gave b 54 % low at (0.2, 2) and
  // b = 0 at (0.45, 4) and (1, 9) (bench harness, seeds 4020, 4045, 4100).
  it('a scan on a black background: a within 10 %, b within 15 % of b + 1/12', () => {
    const img = onBlack();
    for (const [a, b, seed] of [
      [0.2, 2, 3],
      [1, 9, 4],
    ]) {
      const f = fitNoiseLevel(poissonGaussian(img, a, b, seed), img.width, img.height, 255);
      expect(f).not.toBeNull();
      expect(Math.abs(f!.a / a - 1), `a ${f!.a}`).toBeLessThan(0.1);
      expect(Math.abs(f!.b / (b + 1 / 12) - 1), `b ${f!.b} ± ${f!.seB}`).toBeLessThan(0.15);
      expect(f!.points.some((p) => p.used && p.level < 1)).toBe(true);
    }
  });
});
