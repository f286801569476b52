// The randomized SVD's 'reuse' finish (src-main/engine/linalg/reuse-finish.ts; the whole-plane fast path's):
// factors from the last power step's A·Z = Q·R with no product for B = QᵀA (Halko, Martinsson & Tropp 2011,
// SIAM Review 53(2), Alg. 4.4 + 5.1 run on Aᵀ). Synthetic matrices have a known spectrum (withSpectrum:
// orthonormal factors built here), so the Eckart–Young optimum √Σ_{i>k}σᵢ² is exact; the LAPACK-referenced
// image checks are in fast-path.test.ts (factorPlane takes this finish).
import { describe, expect, it } from 'vitest';
import { type Matrix, randomizedSvd } from '../../src-main/engine/linalg';
import type { LinalgPool } from '../../src-main/node/parallel/pool';
import { frob, orthogonalityError, residual, withSpectrum } from './helpers';
import { useTwoPools } from './pools';

let one: LinalgPool;
let two: LinalgPool;
useTwoPools((p) => ({ one, two } = p));

const optimum = (sigma: ArrayLike<number>, k: number) => {
  let s = 0;
  for (let i = k; i < sigma.length; i++) s += sigma[i] * sigma[i];
  return Math.sqrt(s);
};
const errorAt = (a: Matrix, f: { s: Float64Array; U: Matrix; V: Matrix }, k: number) =>
  frob(residual(a, f.U, f.s, f.V, k));

describe("randomizedSvd finish: 'reuse'", () => {
  // σᵢ = (1+i)^−0.3, k = 40 of 240: slow decay, where q = 2 alone misses 1.01× (fast-path.test.ts).
  const sigma = Float64Array.from({ length: 240 }, (_, i) => (1 + i) ** -0.3);
  const a = withSpectrum(300, 240, sigma, 21);
  const a32: Matrix = { rows: 300, cols: 240, data: Float32Array.from(a.data) };
  const k = 40;
  const opts = { precision: 'f32' as const, powerIters: 2, seed: 1, finish: 'reuse' as const };

  it('orthonormal factors, and ‖A − A_k‖²_F = ‖A‖²_F − Σ σᵢ² (uᵢᵀAvᵢ = σᵢ)', () => {
    const f = randomizedSvd(a, k, { ...opts, precision: 'f64' });
    expect(orthogonalityError(f.U)).toBeLessThan(1e-12);
    expect(orthogonalityError(f.V)).toBeLessThan(1e-12);
    let captured = 0;
    for (let i = 0; i < k; i++) captured += f.s[i] * f.s[i];
    const normA2 = frob(a.data) ** 2;
    expect(errorAt(a, f, k) ** 2).toBeCloseTo(normA2 - captured, 10);
    for (let i = 1; i < k; i++) expect(f.s[i]).toBeLessThanOrEqual(f.s[i - 1]);
  });

  it('the accuracy check adds steps until the error is within 1.01× the exact optimum; its estimate is not optimistic by more than 0.1 %', () => {
    const checked = randomizedSvd(a32, k, { ...opts, accuracy: 1.01 });
    expect(checked.powerIters).toBeGreaterThan(2);
    const truth = errorAt(a, checked, k) / optimum(sigma, k);
    expect(truth).toBeLessThanOrEqual(1.01);
    expect(checked.ratioEstimate).toBeLessThanOrEqual(1.01);
    for (const q of [1, 2, 3, 4]) {
      const r = randomizedSvd(a32, k, { ...opts, powerIters: q, accuracy: 1.000001, maxPowerIters: q });
      expect(r.powerIters).toBe(q);
      expect(r.ratioEstimate, `q=${q}`).toBeGreaterThan(errorAt(a, r, k) / optimum(sigma, k) - 1e-3);
    }
  });

  it('fast decay: within 1.01× at q = 2 with no extra step', () => {
    const fast = Float64Array.from({ length: 240 }, (_, i) => 1000 / (1 + i) ** 2 + 0.01);
    const b = withSpectrum(300, 240, fast, 22);
    const b32: Matrix = { rows: 300, cols: 240, data: Float32Array.from(b.data) };
    const r = randomizedSvd(b32, 20, { ...opts, accuracy: 1.01 });
    expect(r.powerIters).toBe(2);
    expect(errorAt(b, r, 20) / optimum(fast, 20)).toBeLessThanOrEqual(1.01);
  });

  it('q = 0 falls back to the projection finish (same factors)', () => {
    const r = randomizedSvd(a32, k, { ...opts, powerIters: 0 });
    const p = randomizedSvd(a32, k, { ...opts, powerIters: 0, finish: 'project' });
    expect(Array.from(r.s)).toEqual(Array.from(p.s));
  });

  it('bit-identical on the wasm backend and on pools of 1 and 2 threads, extra steps included', () => {
    const base = randomizedSvd(a32, k, { ...opts, accuracy: 1.01 });
    expect(base.powerIters).toBeGreaterThan(2);
    for (const pool of [one, two]) {
      const r = randomizedSvd(a32, k, { ...opts, accuracy: 1.01, backend: pool });
      expect(r.powerIters).toBe(base.powerIters);
      expect(Array.from(r.s)).toEqual(Array.from(base.s));
      expect(Array.from(r.U.data)).toEqual(Array.from(base.U.data));
      expect(Array.from(r.V.data)).toEqual(Array.from(base.V.data));
    }
  });
});
