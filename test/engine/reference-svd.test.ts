// Singular values against LAPACK and closed forms.
// Source: test/fixtures/reference/svd_reference.json — numpy 1.24.2 linalg.svd (LAPACK dgesdd), Debian 12,
// with 30-digit mpmath.svd_r values; tolerances from its "suggested_tolerances" and notes.md.
import { beforeAll, describe, expect, it } from 'vitest';
import {
  fromRows,
  fullSvd,
  initEngine,
  jacobiSvd,
  randomizedSvd,
  singularValues,
  symmetricEigenvalues,
} from '../../src-main/engine/linalg';
import { reference } from '../helpers/fixtures';
import { frob, residual, spectralNormEstimate } from './helpers';

const ref = reference('svd_reference.json');
const cases: any[] = [...ref.cases, ...ref.circulant_closed_form.cases];

/** svd_reference.json suggested_tolerances: relative 1e-13 for σ ≥ 1e-3·σ₁, absolute ~1e-14·σ₁ below.
 *  notes.md widens the absolute one to "about 1e-13·σ₁" for ill-conditioned tails; we use that. */
function expectSigmas(ours: ArrayLike<number>, lapack: number[], label: string) {
  const s1 = lapack[0];
  lapack.forEach((v, i) => {
    if (v >= 1e-3 * s1) expect(Math.abs(ours[i] - v) / v, `${label} σ${i + 1}`).toBeLessThan(1e-13);
    else expect(Math.abs(ours[i] - v), `${label} σ${i + 1}`).toBeLessThan(1e-13 * s1);
  });
}

beforeAll(async () => {
  await initEngine();
});

describe('singular values vs LAPACK dgesdd (numpy 1.24.2, svd_reference.json)', () => {
  for (const c of cases) {
    it(`${c.name}: jacobiSvd, fullSvd and singularValues`, () => {
      const A = fromRows(c.matrix);
      expectSigmas(jacobiSvd(A).s, c.singular_values_lapack, `jacobiSvd ${c.name}`);
      expectSigmas(fullSvd(A).s, c.singular_values_lapack, `fullSvd ${c.name}`);
      expectSigmas(singularValues(A), c.singular_values_lapack, `singularValues ${c.name}`);
      // Also against the 30-digit mpmath values (notes.md: LAPACK's Hilbert σ₈ is off by ~1e-8 relative).
      expectSigmas(jacobiSvd(A).s, c.singular_values_exact_30digits.map(Number), `exact ${c.name}`);
    });
    it(`${c.name}: randomizedSvd at full rank (f64) matches to 1e-11·σ₁`, () => {
      const A = fromRows(c.matrix);
      const r = Math.min(A.rows, A.cols);
      const { s } = randomizedSvd(A, r, { precision: 'f64', seed: 3 });
      // Full-rank randomized SVD is an exact SVD up to the CholeskyQR2/Householder roundoff.
      c.singular_values_lapack.forEach((v: number, i: number) => {
        expect(Math.abs(s[i] - v)).toBeLessThan(1e-11 * c.singular_values_lapack[0]);
      });
    });
  }

  it('rank3_7x5: numerical rank 3 (notes.md: σ₄, σ₅ are roundoff, test with absolute 1e-12·σ₁)', () => {
    const c = ref.cases.find((x: any) => x.name === 'rank3_7x5');
    const s = jacobiSvd(fromRows(c.matrix)).s;
    const tolRank = Math.max(7, 5) * s[0] * 2.220446049250313e-16 * 10;
    expect(Array.from(s).filter((v) => v > tolRank).length).toBe(c.exact_rank);
  });
});

describe('circulant closed forms (svd_reference.json circulant_closed_form; Davis 1979 Thm 3.2.2, from memory)', () => {
  it('circulant8_sym: σ = |4 + 2cos(2πk/8)| sorted', () => {
    const c = ref.circulant_closed_form.cases.find((x: any) => x.name === 'circulant8_sym');
    const closed = Array.from({ length: 8 }, (_, k) =>
      Math.abs(4 + 2 * Math.cos((2 * Math.PI * k) / 8)),
    ).sort((a, b) => b - a);
    const s = singularValues(fromRows(c.matrix));
    closed.forEach((v, i) => {
      expect(Math.abs(s[i] - v)).toBeLessThan(1e-13 * closed[0]);
    });
  });
  it('circulant8_ramp: σ = {36, 4/sin(πk/8)} (first row 1..8)', () => {
    const c = ref.circulant_closed_form.cases.find((x: any) => x.name === 'circulant8_ramp');
    const closed = [36, ...Array.from({ length: 7 }, (_, i) => 4 / Math.sin((Math.PI * (i + 1)) / 8))].sort(
      (a, b) => b - a,
    );
    const s = singularValues(fromRows(c.matrix));
    closed.forEach((v, i) => {
      expect(Math.abs(s[i] - v) / v).toBeLessThan(1e-13);
    });
  });
  it('generic |DFT(c)| for a random first row of length 33', () => {
    const n = 33;
    const row = Array.from({ length: n }, (_, j) => Math.cos(j * 1.7) + j / n);
    const C = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => row[(j - i + n) % n]));
    const dft = Array.from({ length: n }, (_, k) => {
      let re = 0;
      let im = 0;
      for (let j = 0; j < n; j++) {
        re += row[j] * Math.cos((-2 * Math.PI * j * k) / n);
        im += row[j] * Math.sin((-2 * Math.PI * j * k) / n);
      }
      return Math.hypot(re, im);
    }).sort((a, b) => b - a);
    const s = singularValues(fromRows(C));
    dft.forEach((v, i) => {
      expect(Math.abs(s[i] - v)).toBeLessThan(1e-12 * dft[0]);
    });
  });
});

describe('Eckart–Young–Mirsky (Eckart & Young 1936; Mirsky 1960 — values in svd_reference.json)', () => {
  for (const c of ref.cases) {
    it(`${c.name}: ‖A−A_k‖₂ = σ_{k+1} (power-iteration estimate) and ‖A−A_k‖_F² = Σ_{i>k}σᵢ²`, () => {
      const A = fromRows(c.matrix);
      const { s, U, V } = jacobiSvd(A);
      const s1 = c.singular_values_lapack[0];
      for (const ey of c.eckart_young) {
        const k = ey.k;
        if (k > s.length) continue;
        const E = residual(A, U, s, V, k);
        expect(Math.abs(frob(E) - ey.frobenius_error)).toBeLessThan(1e-12 * s1);
        const sp = spectralNormEstimate(E, A.rows, A.cols, 400);
        // Power iteration converges like (σ_{k+2}/σ_{k+1})^{2t}; repeated σ (circulants) are fine.
        expect(Math.abs(sp - ey.spectral_error_sigma_k_plus_1)).toBeLessThan(1e-6 * s1);
      }
    });
  }
});

describe('symmetric tridiagonal QL route (Bowdler et al. 1968, tql1)', () => {
  it('eigenvalues of the second-difference matrix tridiag(−1, 2, −1) are 2 − 2cos(πj/(n+1)) (closed form, GVL §4.8, from memory)', () => {
    const n = 50;
    const S = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      S[i * n + i] = 2;
      if (i > 0) S[i * n + i - 1] = -1;
    }
    const got = Array.from(symmetricEigenvalues(S, n)).sort((a, b) => a - b);
    const want = Array.from({ length: n }, (_, j) => 2 - 2 * Math.cos((Math.PI * (j + 1)) / (n + 1)));
    want.forEach((v, i) => {
      expect(Math.abs(got[i] - v)).toBeLessThan(1e-13);
    });
  });
});
