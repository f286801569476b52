// Expected-error bounds of the randomized range finder, averaged over seeds.
// Source: Halko, Martinsson & Tropp, SIAM Review 53(2), 2011 — Thm 10.5, Thm 10.6, Cor 10.10, as
// transcribed in test/fixtures/reference/notes.md (Ω Gaussian n×(k+p), k ≥ 2, p ≥ 2).
import { beforeAll, describe, expect, it } from 'vitest';
import { initEngine, jacobiSingularValues, randomizedSvd } from '../../src-main/engine/linalg';
import { frob, withSpectrum } from './helpers';

const m = 80;
const n = 60;
const k = 8;
const p = 4;
const SEEDS = 24;
// A slowly decaying spectrum makes the bounds bite (a fast decay leaves them trivially loose).
const sigma = Array.from({ length: n }, (_, i) => 1 / (1 + i) ** 0.7);
const A = withSpectrum(m, n, sigma, 17);
const tailF = Math.sqrt(sigma.slice(k).reduce((s, v) => s + v * v, 0));

/** ‖(I − QQᵀ)A‖ (F and 2) where Q spans range((AAᵀ)^q AΩ): randomizedSvd with k+p columns, no extra oversampling. */
function rangeError(q: number, seed: number) {
  const { U } = randomizedSvd(A, k + p, { oversample: 0, powerIters: q, precision: 'f64', seed });
  const l = k + p;
  const UtA = new Float64Array(l * n);
  for (let i = 0; i < m; i++)
    for (let t = 0; t < l; t++)
      for (let j = 0; j < n; j++) UtA[t * n + j] += U.data[i * l + t] * A.data[i * n + j];
  const E = Float64Array.from(A.data);
  for (let i = 0; i < m; i++)
    for (let t = 0; t < l; t++)
      for (let j = 0; j < n; j++) E[i * n + j] -= U.data[i * l + t] * UtA[t * n + j];
  return { fro: frob(E), spec: jacobiSingularValues({ rows: m, cols: n, data: E })[0] };
}

function mean(q: number) {
  let f = 0;
  let s = 0;
  for (let seed = 1; seed <= SEEDS; seed++) {
    const e = rangeError(q, seed * 7919);
    f += e.fro;
    s += e.spec;
  }
  return { fro: f / SEEDS, spec: s / SEEDS };
}

beforeAll(async () => {
  await initEngine();
});

describe('HMT 2011 expected-error bounds (mean over 24 seeds)', () => {
  it('Thm 10.5: E‖(I−P_Y)A‖_F ≤ (1 + k/(p−1))^{1/2}·(Σ_{j>k}σⱼ²)^{1/2}; and ≥ the Eckart–Young optimum', () => {
    const e = mean(0);
    expect(e.fro).toBeLessThanOrEqual(Math.sqrt(1 + k / (p - 1)) * tailF);
    // Range of k+p columns: the error can never beat the rank-(k+p) optimum (Eckart–Young).
    expect(e.fro).toBeGreaterThanOrEqual(Math.sqrt(sigma.slice(k + p).reduce((s, v) => s + v * v, 0)));
  });

  it('Thm 10.6: E‖(I−P_Y)A‖ ≤ (1 + √(k/(p−1)))σ_{k+1} + (e√(k+p)/p)(Σ_{j>k}σⱼ²)^{1/2}', () => {
    const e = mean(0);
    const bound = (1 + Math.sqrt(k / (p - 1))) * sigma[k] + ((Math.E * Math.sqrt(k + p)) / p) * tailF;
    expect(e.spec).toBeLessThanOrEqual(bound);
    expect(e.spec).toBeGreaterThanOrEqual(sigma[k + p] * (1 - 1e-12));
  });

  for (const q of [1, 2]) {
    it(`Cor 10.10 (q = ${q}): E‖(I−P_Z)A‖ ≤ [(1+√(k/(p−1)))σ_{k+1}^{2q+1} + (e√(k+p)/p)(Σ_{j>k}σⱼ^{2(2q+1)})^{1/2}]^{1/(2q+1)}`, () => {
      const e = mean(q);
      const w = 2 * q + 1;
      const tailQ = Math.sqrt(sigma.slice(k).reduce((s, v) => s + v ** (2 * w), 0));
      const bound =
        ((1 + Math.sqrt(k / (p - 1))) * sigma[k] ** w + ((Math.E * Math.sqrt(k + p)) / p) * tailQ) ** (1 / w);
      expect(e.spec).toBeLessThanOrEqual(bound);
      expect(e.spec).toBeGreaterThanOrEqual(sigma[k + p] * (1 - 1e-12));
    });
  }

  it('power iterations help on average (HMT §4.5): q = 2 error < q = 0 error', () => {
    expect(mean(2).spec).toBeLessThan(mean(0).spec);
  });
});
