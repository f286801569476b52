// Shared helpers of the engine tests (no assertions here).
import { type Matrix, Rng } from '../../src-main/engine/linalg';

/** Seeded uniform(−0.5, 0.5) matrix (Rng = xoshiro128**, see src-main/engine/linalg/random.ts). */
export function randomMatrix(m: number, n: number, seed = 1, f32 = false): Matrix {
  const rng = new Rng(seed);
  const d = f32 ? new Float32Array(m * n) : new Float64Array(m * n);
  for (let i = 0; i < m * n; i++) d[i] = rng.uniform() - 0.5;
  return { rows: m, cols: n, data: d };
}

/** Random m×k matrix with orthonormal columns (modified Gram–Schmidt twice on Gaussian columns). */
function randomOrthonormal(m: number, k: number, seed: number): Float64Array {
  const rng = new Rng(seed);
  const Q = new Float64Array(m * k);
  for (let c = 0; c < k; c++) {
    const v = new Float64Array(m);
    for (let i = 0; i < m; i++) v[i] = rng.normal();
    for (let pass = 0; pass < 2; pass++)
      for (let j = 0; j < c; j++) {
        let d = 0;
        for (let i = 0; i < m; i++) d += Q[i * k + j] * v[i];
        for (let i = 0; i < m; i++) v[i] -= d * Q[i * k + j];
      }
    let nn = 0;
    for (let i = 0; i < m; i++) nn += v[i] * v[i];
    nn = Math.sqrt(nn);
    for (let i = 0; i < m; i++) Q[i * k + c] = v[i] / nn;
  }
  return Q;
}

/** A = U·diag(sigma)·Vᵀ with random orthonormal U (m×r), V (n×r): a matrix with a known spectrum. */
export function withSpectrum(m: number, n: number, sigma: ArrayLike<number>, seed = 11, f32 = false): Matrix {
  const r = sigma.length;
  const U = randomOrthonormal(m, r, seed);
  const V = randomOrthonormal(n, r, seed + 1000);
  const d = f32 ? new Float32Array(m * n) : new Float64Array(m * n);
  for (let i = 0; i < m; i++)
    for (let t = 0; t < r; t++) {
      const u = U[i * r + t] * sigma[t];
      if (u === 0) continue;
      for (let j = 0; j < n; j++) d[i * n + j] += u * V[j * r + t];
    }
  return { rows: m, cols: n, data: d };
}

/** Residual E = A − U·diag(s)·Vᵀ in f64 (U m×k, V n×k). */
export function residual(a: Matrix, U: Matrix, s: ArrayLike<number>, V: Matrix, k = s.length): Float64Array {
  const m = a.rows;
  const n = a.cols;
  const E = Float64Array.from(a.data);
  for (let i = 0; i < m; i++)
    for (let t = 0; t < k; t++) {
      const u = U.data[i * U.cols + t] * s[t];
      if (u === 0) continue;
      for (let j = 0; j < n; j++) E[i * n + j] -= u * V.data[j * V.cols + t];
    }
  return E;
}

export function frob(x: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i] * x[i];
  return Math.sqrt(s);
}

/** Spectral norm of the m×n row-major E by power iteration on EᵀE (Golub & Van Loan §8.2.1, from memory). */
export function spectralNormEstimate(
  E: ArrayLike<number>,
  m: number,
  n: number,
  iters = 300,
  seed = 5,
): number {
  const rng = new Rng(seed);
  let v = new Float64Array(n);
  for (let j = 0; j < n; j++) v[j] = rng.normal();
  let est = 0;
  for (let it = 0; it < iters; it++) {
    const w = new Float64Array(m);
    for (let i = 0; i < m; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += E[i * n + j] * v[j];
      w[i] = s;
    }
    const z = new Float64Array(n);
    for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) z[j] += E[i * n + j] * w[i];
    const nz = frob(z);
    if (nz === 0) return 0;
    est = Math.sqrt(nz / frob(v));
    v = z.map((x) => x / nz);
  }
  return est;
}

/** max |QᵀQ − I| for the m×k row-major Q. */
export function orthogonalityError(Q: Matrix): number {
  const { rows: m, cols: k, data } = Q;
  let worst = 0;
  for (let a = 0; a < k; a++)
    for (let b = a; b < k; b++) {
      let s = 0;
      for (let i = 0; i < m; i++) s += data[i * k + a] * data[i * k + b];
      worst = Math.max(worst, Math.abs(s - (a === b ? 1 : 0)));
    }
  return worst;
}
