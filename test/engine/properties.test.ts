// Properties of the SVD routes (each check names its source: a theorem, a definition or another library).
import { Matrix as MlMatrix, SVD as MlSVD } from 'ml-matrix';
import { beforeAll, describe, expect, it } from 'vitest';
import {
  adaptiveRandomizedSvd,
  initEngine,
  jacobiSvd,
  type Matrix,
  matmul,
  matmulTransA,
  matmulTransB,
  orthonormalize,
  randomizedSvd,
  setWasmDisabled,
  singularValues,
  tsBackend,
  wasmBackend,
} from '../../src-main/engine/linalg';
import { frob, orthogonalityError, randomMatrix, residual, withSpectrum } from './helpers';

beforeAll(async () => {
  const { wasm } = await initEngine();
  // The test machine runs Node ≥ 20, which has WebAssembly SIMD: a false here means the kernels failed to load.
  expect(wasm).toBe(true);
});

const decay = (r: number, rate = 0.85, scale = 100) => Array.from({ length: r }, (_, i) => scale * rate ** i);

describe('orthonormality, reconstruction, ordering (definition of the SVD, GVL §2.4)', () => {
  for (const [m, n] of [
    [60, 40],
    [40, 60],
    [1, 7],
    [7, 1],
    [1, 1],
  ]) {
    it(`${m}×${n}: jacobiSvd and randomizedSvd (full rank) reconstruct A, U and V orthonormal, σ non-increasing`, () => {
      const A = randomMatrix(m, n, m * 31 + n);
      const r = Math.min(m, n);
      for (const res of [jacobiSvd(A), randomizedSvd(A, r, { precision: 'f64' })]) {
        expect(res.s.length).toBe(r);
        expect(res.U.rows).toBe(m);
        expect(res.V.rows).toBe(n);
        expect(orthogonalityError(res.U)).toBeLessThan(1e-12);
        expect(orthogonalityError(res.V)).toBeLessThan(1e-12);
        for (let i = 1; i < r; i++) expect(res.s[i]).toBeLessThanOrEqual(res.s[i - 1]);
        expect(frob(residual(A, res.U, res.s, res.V))).toBeLessThan(1e-12 * frob(A.data));
      }
    });
  }

  it('rank-deficient 50×30 of rank 5: five σ > 0, the rest ≈ 0, U still orthonormal (Householder fallback)', () => {
    const A = withSpectrum(50, 30, [9, 7, 5, 3, 1]);
    const res = randomizedSvd(A, 12, { precision: 'f64' });
    expect(orthogonalityError(res.U)).toBeLessThan(1e-12);
    expect(orthogonalityError(res.V)).toBeLessThan(1e-12);
    [9, 7, 5, 3, 1].forEach((v, i) => {
      expect(Math.abs(res.s[i] - v)).toBeLessThan(1e-12 * 9);
    });
    for (let i = 5; i < 12; i++) expect(res.s[i]).toBeLessThan(1e-13 * 9);
    const j = jacobiSvd(A);
    expect(orthogonalityError(j.U)).toBeLessThan(1e-12);
    for (let i = 5; i < 30; i++) expect(j.s[i]).toBeLessThan(1e-13 * 9);
  });

  it('all-zero 20×30: σ = 0, factors orthonormal, no NaN', () => {
    const A: Matrix = { rows: 20, cols: 30, data: new Float64Array(600) };
    for (const res of [
      jacobiSvd(A),
      randomizedSvd(A, 5),
      randomizedSvd({ ...A, data: new Float32Array(600) }, 5),
    ]) {
      expect(Array.from(res.s).every((v) => v === 0)).toBe(true);
      expect(orthogonalityError(res.U)).toBeLessThan(1e-6);
      expect(orthogonalityError(res.V)).toBeLessThan(1e-6);
    }
    expect(Array.from(singularValues(A))).toEqual(new Array(20).fill(0));
  });

  it('rejects bad rank and non-finite input with a message naming the problem', () => {
    const A = randomMatrix(5, 4);
    expect(() => randomizedSvd(A, 0)).toThrow('expected integer between 1 and 4 for rank but received 0');
    expect(() => randomizedSvd(A, 5)).toThrow('expected integer between 1 and 4 for rank');
    const B = randomMatrix(5, 4);
    B.data[6] = Number.NaN;
    expect(() => randomizedSvd(B, 2)).toThrow('non-finite entry (NaN) at row 1, column 2');
    expect(() => singularValues(B)).toThrow('non-finite entry');
  });
});

describe('randomized SVD accuracy and determinism', () => {
  it('f32 input (as scans are stored): σ within 1e-5·σ₁ of the f64 run, Frobenius error within 1% of Eckart–Young', () => {
    const sigma = decay(120, 0.95);
    const A = withSpectrum(200, 160, sigma, 3, true);
    const k = 20;
    const res = randomizedSvd(A, k);
    const ref64 = randomizedSvd(A, k, { precision: 'f64' });
    expect(res.U.data).toBeInstanceOf(Float32Array);
    expect(ref64.U.data).toBeInstanceOf(Float64Array);
    for (let i = 0; i < k; i++) expect(Math.abs(res.s[i] - ref64.s[i])).toBeLessThan(1e-5 * sigma[0]);
    // The dominant σ are resolved exactly by the range finder (gap σ₁/σ₂₁ ≫ 1), whatever the precision.
    for (let i = 0; i < 5; i++) expect(Math.abs(res.s[i] - sigma[i])).toBeLessThan(1e-5 * sigma[0]);
    const opt = Math.sqrt(sigma.slice(k).reduce((s, v) => s + v * v, 0));
    expect(frob(residual(A, res.U, res.s, res.V)) / opt).toBeLessThan(1.01);
  });

  it('block Krylov (Musco & Musco 2015) is at least as accurate as power iteration at equal q', () => {
    const sigma = decay(150, 0.97);
    const A = withSpectrum(220, 180, sigma, 4);
    const k = 15;
    const opt = Math.sqrt(sigma.slice(k).reduce((s, v) => s + v * v, 0));
    const p = randomizedSvd(A, k, { powerIters: 1, seed: 2 });
    const kr = randomizedSvd(A, k, { powerIters: 1, seed: 2, method: 'krylov' });
    const errP = frob(residual(A, p.U, p.s, p.V)) / opt;
    const errK = frob(residual(A, kr.U, kr.s, kr.V)) / opt;
    expect(errK).toBeLessThanOrEqual(errP * 1.0001);
    expect(errK).toBeLessThan(1.05);
  });

  it('fixed seed → bit-identical output; a different seed → different U (same σ to 1e-6)', () => {
    const A = randomMatrix(80, 70, 9, true);
    const a = randomizedSvd(A, 10, { seed: 42 });
    const b = randomizedSvd(A, 10, { seed: 42 });
    const c = randomizedSvd(A, 10, { seed: 43 });
    expect(Array.from(a.s)).toEqual(Array.from(b.s));
    expect(Array.from(a.U.data)).toEqual(Array.from(b.U.data));
    expect(Array.from(a.V.data)).toEqual(Array.from(b.V.data));
    expect(Array.from(a.U.data)).not.toEqual(Array.from(c.U.data));
  });

  it('WASM SIMD kernels and the TypeScript fallback agree (products to rounding; SVD σ to 1e-12 in f64, 1e-5 in f32)', () => {
    expect(wasmBackend()).not.toBeNull();
    for (const f32 of [false, true]) {
      const A = randomMatrix(37, 29, 1, f32);
      const B = randomMatrix(29, 13, 2, f32);
      const At = randomMatrix(37, 13, 3, f32);
      const Bt = randomMatrix(13, 29, 4, f32);
      const tol = f32 ? 1e-5 : 1e-13;
      for (const [x, y] of [
        [matmul(A, B), matmul(A, B, undefined, tsBackend)],
        [matmulTransA(A, At), matmulTransA(A, At, undefined, tsBackend)],
        [matmulTransB(A, Bt), matmulTransB(A, Bt, undefined, tsBackend)],
      ]) {
        expect(x.data.constructor).toBe(f32 ? Float32Array : Float64Array);
        for (let i = 0; i < x.data.length; i++) expect(Math.abs(x.data[i] - y.data[i])).toBeLessThan(tol);
      }
      // Naive triple loop as the outside reference for A·B.
      const C = matmul(A, B);
      for (let i = 0; i < 37; i++)
        for (let j = 0; j < 13; j++) {
          let s = 0;
          for (let p = 0; p < 29; p++) s += A.data[i * 29 + p] * B.data[p * 13 + j];
          expect(Math.abs(C.data[i * 13 + j] - s)).toBeLessThan(tol);
        }
      // One-sided Jacobi: the WebAssembly sweeps (f64x2) vs the TypeScript sweeps.
      const J = randomMatrix(70, 45, 12);
      const jw = jacobiSvd(J);
      setWasmDisabled(true);
      const jt = jacobiSvd(J);
      setWasmDisabled(false);
      for (let i = 0; i < 45; i++) expect(Math.abs(jw.s[i] - jt.s[i])).toBeLessThan(1e-13 * jw.s[0]);
      for (let c = 0; c < 45; c++) {
        let d = 0;
        for (let i = 0; i < 45; i++) d += jw.V.data[i * 45 + c] * jt.V.data[i * 45 + c];
        expect(Math.abs(Math.abs(d) - 1)).toBeLessThan(1e-10); // same vector up to sign (distinct σ)
      }
      const M = withSpectrum(90, 60, decay(60), 5, f32);
      const w = randomizedSvd(M, 12, { seed: 1 });
      setWasmDisabled(true);
      try {
        const t = randomizedSvd(M, 12, { seed: 1 });
        for (let i = 0; i < 12; i++)
          expect(Math.abs(w.s[i] - t.s[i])).toBeLessThan((f32 ? 1e-5 : 1e-12) * w.s[0]);
        const sv = singularValues(randomMatrix(300, 280, 8));
        setWasmDisabled(false);
        const sw = singularValues(randomMatrix(300, 280, 8));
        for (let i = 0; i < 280; i++) expect(Math.abs(sv[i] - sw[i])).toBeLessThan(1e-10 * sw[0]);
      } finally {
        setWasmDisabled(false);
      }
    }
  });
});

describe('option grid (shapes × ranks × methods × precisions × q): no workspace overflow, valid factors', () => {
  it('every combination returns k non-increasing σ and orthonormal U, V (definition of the SVD)', () => {
    for (const [m, n] of [
      [5, 3],
      [17, 40],
      [64, 64],
      [100, 30],
    ])
      for (const k of [1, Math.ceil(Math.min(m, n) / 2), Math.min(m, n)])
        for (const method of ['power', 'krylov'] as const)
          for (const precision of ['f32', 'f64'] as const)
            for (const powerIters of [0, 1, 3]) {
              const A = withSpectrum(m, n, decay(Math.min(m, n), 0.8), m + n + k, precision === 'f32');
              const r = randomizedSvd(A, k, { method, precision, powerIters, seed: 5 });
              const tol = precision === 'f32' ? 2e-5 : 1e-12;
              expect(r.s.length).toBe(k);
              for (let i = 1; i < k; i++) expect(r.s[i]).toBeLessThanOrEqual(r.s[i - 1]);
              expect(orthogonalityError(r.U)).toBeLessThan(tol);
              expect(orthogonalityError(r.V)).toBeLessThan(tol);
              // σ₁ is found to within a few % even with q = 0 on this spectrum (HMT Thm 10.6 scale).
              expect(Math.abs(r.s[0] - 100) / 100).toBeLessThan(0.05);
            }
  });
});

describe('QR (CholeskyQR2 with Householder fallback; Fukaya et al. 2014/2020)', () => {
  it('orthonormal Q and A = QR for well-conditioned, ill-conditioned (κ≈1e12) and rank-deficient blocks', () => {
    const ws = tsBackend.workspace(0);
    for (const sigma of [
      decay(20, 0.9, 1),
      decay(20, 0.25, 1),
      [...decay(5, 0.5, 1), ...new Array(15).fill(0)],
    ]) {
      const A = withSpectrum(200, 20, sigma, 7);
      const Y = Float64Array.from(A.data);
      const R = new Float64Array(400);
      orthonormalize(ws, Y, 200, 20, R);
      expect(orthogonalityError({ rows: 200, cols: 20, data: Y })).toBeLessThan(1e-13);
      const QR = matmul({ rows: 200, cols: 20, data: Y }, { rows: 20, cols: 20, data: R });
      for (let i = 0; i < 4000; i++) expect(Math.abs(QR.data[i] - A.data[i])).toBeLessThan(1e-13);
    }
  });
});

describe('agreement with ml-matrix 6.x SVD (npm ml-matrix, package.json ^6.12)', () => {
  for (const [m, n] of [
    [200, 150],
    [120, 200],
    [200, 200],
  ]) {
    it(`${m}×${n}: all σ (singularValues) to 1e-10·σ₁; top 10 of randomizedSvd (q = 12) to 2e-3·σ₁`, () => {
      const A = randomMatrix(m, n, m + n);
      const rows = Array.from({ length: m }, (_, i) => Array.from(A.data.subarray(i * n, (i + 1) * n)));
      const theirs = new MlSVD(new MlMatrix(rows), { autoTranspose: true }).diagonal;
      const ours = singularValues(A);
      theirs.forEach((v, i) => {
        expect(Math.abs(ours[i] - v)).toBeLessThan(1e-10 * theirs[0]);
      });
      const top = randomizedSvd(A, 10, { precision: 'f64', powerIters: 12 }).s;
      // Random matrices have a flat spectrum: only many power iterations resolve the top 10 closely.
      for (let i = 0; i < 10; i++) expect(Math.abs(top[i] - theirs[i])).toBeLessThan(2e-3 * theirs[0]);
    });
  }
});

describe('singularValues on the Gram route (short side > 256)', () => {
  it('300×280 and 280×300 with a known spectrum spanning 1e6: every σ within the stated bound nε·σ₁²/σᵢ', () => {
    const sigma = Array.from({ length: 280 }, (_, i) => 1000 * 10 ** (-6 * (i / 279)));
    for (const [m, n] of [
      [300, 280],
      [280, 300],
    ]) {
      const A = withSpectrum(m, n, sigma, 21);
      const s = singularValues(A);
      sigma.forEach((v, i) => {
        const bound = (280 * 2.2e-16 * sigma[0] ** 2) / v + 1e-13 * sigma[0];
        expect(Math.abs(s[i] - v)).toBeLessThan(bound);
      });
    }
  });
});

describe('singularValues, rank-deficient on the Gram route', () => {
  it('300×280 of rank 100: top 100 within the bound, the other 180 below √(nε)·σ₁ (stated accuracy in TSDoc)', () => {
    const sigma = Array.from({ length: 100 }, (_, i) => 10 * 0.95 ** i);
    const s = singularValues(withSpectrum(300, 280, sigma, 31));
    sigma.forEach((v, i) => {
      expect(Math.abs(s[i] - v)).toBeLessThan((280 * 2.2e-16 * sigma[0] ** 2) / v + 1e-13 * sigma[0]);
    });
    for (let i = 100; i < 280; i++) expect(s[i]).toBeLessThan(Math.sqrt(280 * 2.2e-16) * sigma[0]);
  });
});

describe('adaptiveRandomizedSvd (HMT 2011 §4.3, eq. 4.3)', () => {
  it('reaches the tolerance: true ‖A−A_j‖₂ ≤ tol ≤ errorEstimate bound, and j ≥ #{σ > tol}', () => {
    const sigma = decay(100, 0.9);
    const A = withSpectrum(110, 90, sigma.slice(0, 90), 6);
    for (const tol of [10, 0.05]) {
      const r = adaptiveRandomizedSvd(A, tol, { precision: 'f64' });
      expect(r.converged).toBe(true);
      const need = sigma.filter((v) => v > tol).length;
      expect(r.rank).toBeGreaterThanOrEqual(need);
      const trueErr = jacobiSvd({ rows: 110, cols: 90, data: residual(A, r.U, r.s, r.V) }).s[0];
      expect(trueErr).toBeLessThanOrEqual(tol);
      expect(r.errorEstimate).toBeGreaterThanOrEqual(trueErr);
      // Not wildly more rank than needed: the estimate overshoots by ≤ 10√(2/π)·(a few), i.e. σ decays 0.9/step.
      expect(r.rank).toBeLessThan(need + 40);
    }
  });
});
