// The ziggurat normal sampler (src-main/engine/linalg/ziggurat.ts; the randomized SVD's test matrix):
// one fixed-seed sample of a million deviates against the standard normal distribution. Every check
// allows 5 standard errors of its statistic, so it holds for a correct sampler with any seed (p ≈ 6e-7
// each) and fails for a wrong table: a layer of the wrong width moves the mass near its edge by far more.
//
// Reference probabilities: Φ(x) = erfc(−x/√2)/2 computed with Python 3.11 `math.erfc` (standard normal
// CDF; the same figures as Abramowitz & Stegun 1964, Table 26.1, to the digits printed there).
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src-main/engine/linalg/random';
import { fillNormalZiggurat } from '../../src-main/engine/linalg/ziggurat';

const N = 1_000_000;
/** Standard errors allowed for each statistic. */
const Z = 5;

/** Φ(x) for the x below (Python 3.11: 0.5 * math.erfc(-x / math.sqrt(2))). */
const CDF: [number, number][] = [
  [-2.5, 0.006209665325776139],
  [-1.5, 0.06680720126885809],
  [-1, 0.15865525393145707],
  [-0.5, 0.3085375387259869],
  [0, 0.5],
  [0.5, 0.6914624612740131],
  [1, 0.8413447460685429],
  [1.5, 0.9331927987311419],
  [2.5, 0.9937903346742238],
];
/**
 * P(|X| > t) = erfc(t/√2) (Python 3.11 math.erfc). 3.442619855899 is where the ziggurat's base strip
 * hands over to its tail sampler (Marsaglia & Tsang 2000, r in `zigset`).
 */
const TAILS: [number, number][] = [
  [1, 0.31731050786291415],
  [2, 0.04550026389635844],
  [3, 0.0026997960632601913],
  [3.442619855899, 0.0005761085123916405],
];

describe('fillNormalZiggurat', () => {
  const x = new Float64Array(N);
  fillNormalZiggurat(new Rng(2026), x);

  it('has mean 0 and variance 1 (within 5 standard errors: 1/√N and √(2/N))', () => {
    let s = 0;
    let s2 = 0;
    for (const v of x) {
      s += v;
      s2 += v * v;
    }
    const mean = s / N;
    expect(Math.abs(mean)).toBeLessThan(Z / Math.sqrt(N));
    expect(Math.abs(s2 / N - mean * mean - 1)).toBeLessThan(Z * Math.sqrt(2 / N));
  });

  it('follows Φ at nine points and both tails beyond 1, 2, 3 and the base strip (binomial standard errors)', () => {
    const within = (count: number, p: number) =>
      expect(Math.abs(count / N - p)).toBeLessThan(Z * Math.sqrt((p * (1 - p)) / N));
    for (const [t, p] of CDF)
      within(
        x.reduce((c, v) => c + (v <= t ? 1 : 0), 0),
        p,
      );
    for (const [t, p] of TAILS)
      within(
        x.reduce((c, v) => c + (Math.abs(v) > t ? 1 : 0), 0),
        p,
      );
  });

  it('is symmetric: as many deviates above 0 as below (within 5 standard errors)', () => {
    const pos = x.reduce((c, v) => c + (v > 0 ? 1 : 0), 0);
    expect(Math.abs(pos / N - 0.5)).toBeLessThan(Z * Math.sqrt(0.25 / N));
  });

  it('is deterministic for a seed, fills only [start, end), and differs between seeds', () => {
    const a = new Float32Array(1000);
    const b = new Float32Array(1000);
    fillNormalZiggurat(new Rng(7), a);
    fillNormalZiggurat(new Rng(7), b);
    expect(b).toEqual(a);
    const c = new Float32Array(1000);
    fillNormalZiggurat(new Rng(8), c, 100, 900);
    expect(c[99]).toBe(0);
    expect(c[900]).toBe(0);
    expect(c.subarray(100, 900).some((v, i) => v !== a[100 + i])).toBe(true);
    expect(c.subarray(100, 900).every((v) => v !== 0 && Number.isFinite(v))).toBe(true);
  });
});
