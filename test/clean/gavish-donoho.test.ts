// Gavish–Donoho optimal hard threshold: λ*(β), the Marchenko–Pastur median μ_β, ω(β) and the thresholds,
// against test/fixtures/reference/gavish_donoho.json (numpy 1.24.2 / scipy 1.10.1 quad+brentq, mpmath 1.2.1
// 25-digit cross-check; see gavish_donoho_note.md for the tolerances).
import { describe, expect, it } from 'vitest';
import {
  lambdaStar,
  marchenkoPasturCdf,
  marchenkoPasturMedian,
  medianOf,
  omega,
  omegaCubic,
  rankAbove,
  sigmaFromMedian,
  thresholdKnownSigma,
  thresholdUnknownSigma,
} from '../../src-main/engine/clean';
import { jacobiSvd } from '../../src-main/engine/linalg';
import { reference } from '../helpers/fixtures';
import { gaussian, rng } from './helpers';

interface GdRow {
  beta: number;
  lambda_star: number;
  lambda_star_30digits: string;
  mu_beta_MP_median_mpmath_25digits: string;
  omega_exact_25digits: string;
  omega_cubic_approx: number;
}
const gd = reference<{
  checks: Record<string, number>;
  table: GdRow[];
  worked_examples: Array<{
    shape: [number, number];
    sigma?: number;
    median_singular_value?: number;
    tau_sigma_known?: number;
    tau_sigma_unknown?: number;
  }>;
}>('gavish_donoho.json');

describe('Gavish–Donoho 2014 constants', () => {
  it('λ*(1) = 4/√3 (paper title and abstract: 4/√3 ≈ 2.309), to 1e-15', () => {
    expect(Math.abs(lambdaStar(1) - 4 / Math.sqrt(3))).toBeLessThan(1e-15);
    expect(lambdaStar(1)).toBeCloseTo(2.309, 3);
  });

  it('ω(1) ≈ 2.858 (paper abstract) and equals the reference exact value to 1e-13', () => {
    expect(Math.abs(omega(1) - 2.858)).toBeLessThan(5e-4);
    expect(Math.abs(omega(1) - gd.checks.omega_1_exact)).toBeLessThan(1e-13);
    expect(Math.abs(marchenkoPasturMedian(1) - gd.checks.mu_1)).toBeLessThan(1e-13);
  });

  it('the whole β table: λ* to 1e-14, μ_β and exact ω to 1e-13 (mpmath 25 digits), cubic to 1e-12', () => {
    for (const row of gd.table) {
      expect(
        Math.abs(lambdaStar(row.beta) - Number(row.lambda_star_30digits)),
        `λ*(${row.beta})`,
      ).toBeLessThan(1e-14);
      expect(
        Math.abs(marchenkoPasturMedian(row.beta) - Number(row.mu_beta_MP_median_mpmath_25digits)),
        `μ(${row.beta})`,
      ).toBeLessThan(1e-13);
      expect(Math.abs(omega(row.beta) - Number(row.omega_exact_25digits)), `ω(${row.beta})`).toBeLessThan(
        1e-13,
      );
      expect(Math.abs(omegaCubic(row.beta) - row.omega_cubic_approx), `cubic(${row.beta})`).toBeLessThan(
        1e-12,
      );
      // gavish_donoho_note.md: the cubic is within ~0.006 of the exact ω on β = 0.1…1.
      expect(Math.abs(omegaCubic(row.beta) - omega(row.beta))).toBeLessThan(0.006);
    }
  });

  it('the Marchenko–Pastur CDF is 0 and 1 at the support edges (1 ± √β)² and ½ at μ_β', () => {
    for (const beta of [0.1, 0.5, 1]) {
      expect(marchenkoPasturCdf(beta, (1 - Math.sqrt(beta)) ** 2)).toBe(0);
      expect(Math.abs(marchenkoPasturCdf(beta, (1 + Math.sqrt(beta)) ** 2 - 1e-9) - 1)).toBeLessThan(1e-4);
      expect(Math.abs(marchenkoPasturCdf(beta, marchenkoPasturMedian(beta)) - 0.5)).toBeLessThan(1e-14);
    }
  });

  it('worked examples of the reference (τ for σ known and unknown), to 1e-12 relative', () => {
    for (const ex of gd.worked_examples) {
      const [m, n] = ex.shape;
      if (ex.tau_sigma_known !== undefined)
        expect(Math.abs(thresholdKnownSigma(m, n, ex.sigma as number) / ex.tau_sigma_known - 1)).toBeLessThan(
          1e-12,
        );
      if (ex.tau_sigma_unknown !== undefined)
        expect(
          Math.abs(
            thresholdUnknownSigma(m, n, ex.median_singular_value as number) / ex.tau_sigma_unknown - 1,
          ),
        ).toBeLessThan(1e-12);
    }
  });

  it('orders the shape itself: a 200×100 matrix has the same threshold as 100×200', () => {
    expect(thresholdKnownSigma(200, 100, 1)).toBe(thresholdKnownSigma(100, 200, 1));
  });
});

describe('Gavish–Donoho on a planted low-rank matrix (σ = 0.5, 60×120, singular values via jacobiSvd)', () => {
  // Y = X + σZ with X of rank 3 and singular values 40, 30, 25 (all well above τ = λ*(½)·√120·σ ≈ 10.8);
  // the thresholds must keep exactly 3, and σ̂ = y_med/√(n·μ_β) must be within 5 % of σ
  // (Gavish–Donoho 2014 σ-unknown case; the median is dominated by the noise bulk).
  const m = 60;
  const n = 120;
  const sigma = 0.5;
  const g = gaussian(rng(11));
  const data = new Float64Array(m * n);
  const strengths = [40, 30, 25];
  const orth = (len: number) => {
    const vs: Float64Array[] = [];
    for (let k = 0; k < 3; k++) {
      const v = Float64Array.from({ length: len }, () => g());
      for (const u of vs) {
        const d = v.reduce((a, x, i) => a + x * u[i], 0);
        for (let i = 0; i < len; i++) v[i] -= d * u[i];
      }
      const nv = Math.sqrt(v.reduce((a, x) => a + x * x, 0));
      vs.push(v.map((x) => x / nv));
    }
    return vs;
  };
  const U = orth(m);
  const V = orth(n);
  for (let i = 0; i < m; i++)
    for (let j = 0; j < n; j++) {
      let x = 0;
      for (let k = 0; k < 3; k++) x += strengths[k] * U[k][i] * V[k][j];
      data[i * n + j] = x + sigma * g();
    }
  const { s } = jacobiSvd({ rows: m, cols: n, data });

  it('σ known: keeps exactly the planted rank', () => {
    expect(rankAbove(s, thresholdKnownSigma(m, n, sigma))).toBe(3);
  });
  it('σ unknown: τ = ω(β)·y_med keeps exactly the planted rank', () => {
    expect(rankAbove(s, thresholdUnknownSigma(m, n, medianOf(s)))).toBe(3);
  });
  it('σ̂ = y_med/√(n·μ_β) is within 5 % of σ', () => {
    expect(Math.abs(sigmaFromMedian(m, n, medianOf(s)) / sigma - 1)).toBeLessThan(0.05);
  });
});
