// The small-SVD stage of randomizedSvd for l = k + p ≥ 48 (Gram eigen-decomposition route, with its
// refinement for graded spectra and its Jacobi fallback), and the symmetric eigensolver behind it.
import { Matrix as MlMatrix, SVD as MlSVD } from 'ml-matrix';
import { beforeAll, describe, expect, it } from 'vitest';
import { initEngine, jacobiSvd, randomizedSvd, tsBackend, wasmBackend } from '../../src-main/engine/linalg';
import { symmetricEigen } from '../../src-main/engine/linalg/symmetric-eigen';
import { frob, orthogonalityError, randomMatrix, residual, withSpectrum } from './helpers';

beforeAll(async () => {
  expect((await initEngine()).wasm).toBe(true);
});

describe('symmetricEigen (tridiagonalisation + QL with vectors)', () => {
  it('second-difference matrix: λⱼ = 2 − 2cos(jπ/(n+1)) (closed form, e.g. GVL 4th ed. §4.8 — from memory)', () => {
    const n = 70;
    const S = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      S[i * n + i] = 2;
      if (i > 0) S[i * n + i - 1] = S[(i - 1) * n + i] = -1;
    }
    const { values, vectorsT } = symmetricEigen(S.slice(), n);
    for (let j = 1; j <= n; j++)
      expect(Math.abs(values[n - j] - (2 - 2 * Math.cos((j * Math.PI) / (n + 1))))).toBeLessThan(1e-13);
    // Residual ‖S w − λ w‖ and orthonormality of the eigenvectors (definition; backward stability).
    let res = 0;
    for (let r = 0; r < n; r++)
      for (let i = 0; i < n; i++) {
        let sw = 0;
        for (let j = 0; j < n; j++) sw += S[i * n + j] * vectorsT[r * n + j];
        res = Math.max(res, Math.abs(sw - values[r] * vectorsT[r * n + i]));
      }
    expect(res).toBeLessThan(1e-13);
    const W = { rows: n, cols: n, data: vectorsT };
    expect(orthogonalityError(W)).toBeLessThan(1e-13);
  });

  it('random symmetric 90×90: eigenvalues equal ml-matrix 6.x EVD (to 1e-11·‖S‖)', async () => {
    const { EVD } = await import('ml-matrix');
    const n = 90;
    const X = randomMatrix(n, n, 5);
    const S = new Float64Array(n * n);
    for (let i = 0; i < n; i++)
      for (let j = 0; j < n; j++) S[i * n + j] = X.data[i * n + j] + X.data[j * n + i];
    const rows = Array.from({ length: n }, (_, i) => Array.from(S.subarray(i * n, i * n + n)));
    const ref = [...new EVD(new MlMatrix(rows), { assumeSymmetric: true }).realEigenvalues].sort(
      (a, b) => b - a,
    );
    const { values } = symmetricEigen(S.slice(), n);
    const scale = Math.max(Math.abs(ref[0]), Math.abs(ref[n - 1]));
    for (let i = 0; i < n; i++) expect(Math.abs(values[i] - ref[i])).toBeLessThan(1e-11 * scale);
  });
});

describe('symmetricEigen: WebAssembly kernel and TypeScript agree', () => {
  it('random symmetric 131×131 (odd size): eigenvalues to 1e-12·‖S‖, eigenvectors to 1e-9 up to sign', () => {
    const n = 131;
    const X = randomMatrix(n, n, 9);
    const ws = wasmBackend()!.workspace(8 * (3 * n * n + 20 * n) + 4096);
    try {
      const S = ws.f64(n * n);
      for (let i = 0; i < n; i++)
        for (let j = 0; j < n; j++) S[i * n + j] = X.data[i * n + j] + X.data[j * n + i];
      const ts = symmetricEigen(S.slice(), n);
      const wa = symmetricEigen(S, n, ws);
      const scale = Math.max(Math.abs(ts.values[0]), Math.abs(ts.values[n - 1]));
      for (let i = 0; i < n; i++) {
        expect(Math.abs(ts.values[i] - wa.values[i])).toBeLessThan(1e-12 * scale);
        let dot = 0;
        for (let j = 0; j < n; j++) dot += ts.vectorsT[i * n + j] * wa.vectorsT[i * n + j];
        expect(Math.abs(Math.abs(dot) - 1)).toBeLessThan(1e-9);
      }
      expect(orthogonalityError({ rows: n, cols: n, data: Float64Array.from(wa.vectorsT) })).toBeLessThan(
        1e-13,
      );
    } finally {
      ws.release();
    }
  });
});

describe('randomizedSvd small core at l ≥ 48', () => {
  /** Exact rank r = k + p: the range finder captures range(A) exactly (HMT 2011 §1.3), so σ are exact. */
  const r = 70;
  const k = 60;
  it('moderate spectrum (direct Gram route): σ equal the constructed ones, U, V orthonormal, A_k optimal (Eckart–Young)', () => {
    const sigma = Array.from({ length: r }, (_, i) => 1000 / (1 + i));
    const A = withSpectrum(300, 260, sigma, 3);
    for (const backend of [undefined, tsBackend]) {
      const res = randomizedSvd(A, k, { precision: 'f64', backend });
      for (let i = 0; i < k; i++) expect(Math.abs(res.s[i] - sigma[i])).toBeLessThan(1e-10 * sigma[0]);
      expect(orthogonalityError(res.U)).toBeLessThan(1e-11);
      expect(orthogonalityError(res.V)).toBeLessThan(1e-11);
      const opt = Math.sqrt(sigma.slice(k).reduce((a, s) => a + s * s, 0));
      expect(frob(residual(A, res.U, res.s, res.V))).toBeLessThan(opt * (1 + 1e-9));
    }
  });

  it('graded spectrum σ₁/σ_k ≈ 1e5 (refined route): σ to 1e-8 relative, orthonormal factors', () => {
    const sigma = Array.from({ length: r }, (_, i) => 10 ** (-5 * (i / (r - 1))));
    const A = withSpectrum(260, 300, sigma, 4);
    const res = randomizedSvd(A, k, { precision: 'f64' });
    for (let i = 0; i < k; i++) expect(Math.abs(res.s[i] - sigma[i])).toBeLessThan(1e-8 * sigma[i] + 1e-13);
    expect(orthogonalityError(res.U)).toBeLessThan(1e-11);
    expect(orthogonalityError(res.V)).toBeLessThan(1e-11);
    // f32 factors on the same input: σ to f32 accuracy of the data (1e-5·σ₁, as in properties.test.ts).
    const A32 = { rows: A.rows, cols: A.cols, data: Float32Array.from(A.data) };
    const r32 = randomizedSvd(A32, k);
    for (let i = 0; i < 20; i++) expect(Math.abs(r32.s[i] - sigma[i])).toBeLessThan(1e-5 * sigma[0]);
    expect(orthogonalityError(r32.U)).toBeLessThan(1e-4);
    expect(orthogonalityError(r32.V)).toBeLessThan(1e-4);
  });

  it('rank-deficient (rank 30, k = 50: Jacobi fallback) and full rank 60×50 reconstructs; agrees with ml-matrix SVD', () => {
    const sigma = Array.from({ length: 30 }, (_, i) => 50 / (1 + i));
    const A = withSpectrum(120, 100, sigma, 6);
    const res = randomizedSvd(A, 50, { precision: 'f64' });
    for (let i = 0; i < 30; i++) expect(Math.abs(res.s[i] - sigma[i])).toBeLessThan(1e-10 * sigma[0]);
    for (let i = 30; i < 50; i++) expect(res.s[i]).toBeLessThan(1e-10 * sigma[0]);
    expect(orthogonalityError(res.U)).toBeLessThan(1e-10);
    expect(orthogonalityError(res.V)).toBeLessThan(1e-10);
    const F = randomMatrix(60, 50, 8);
    const full = randomizedSvd(F, 50, { precision: 'f64' });
    expect(frob(residual(F, full.U, full.s, full.V))).toBeLessThan(1e-10 * frob(F.data));
    const rows = Array.from({ length: 60 }, (_, i) => Array.from(F.data.subarray(i * 50, i * 50 + 50)));
    const ml = new MlSVD(new MlMatrix(rows), { autoTranspose: true }).diagonal;
    const jac = jacobiSvd(F).s;
    for (let i = 0; i < 50; i++) {
      expect(Math.abs(full.s[i] - ml[i])).toBeLessThan(1e-10 * ml[0]);
      expect(Math.abs(full.s[i] - jac[i])).toBeLessThan(1e-10 * ml[0]);
    }
  });
});
