// WASM product kernels at remainder widths (the 4-wide f32 / 2-wide f64 edge blocks) against a plain
// triple loop in f64 (definition of the matrix product) and the TypeScript fallback.
import { beforeAll, expect, it } from 'vitest';
import { initEngine, tsBackend, wasmBackend } from '../../src-main/engine/linalg';

beforeAll(async () => {
  expect((await initEngine()).wasm).toBe(true);
});

it('A·B and Aᵀ·B for n = 1…13 and 60, 210, 300 columns (two f32 column blocks), f32 and f64, with accumulate', () => {
  const m = 37;
  const k = 301; // > one K block (256)
  for (const f32 of [true, false])
    for (const n of [1, 2, 3, 4, 5, 6, 7, 9, 10, 11, 12, 13, 60, 210, 300]) {
      const ws = wasmBackend()!.workspace(8 * (2 * m * k + 2 * k * n + 4 * m * n) + 4096);
      try {
        const alloc = (len: number) => (f32 ? ws.f32(len) : ws.f64(len));
        const A = alloc(m * k);
        const At = alloc(k * m);
        const B = alloc(k * n);
        let x = 7;
        const rnd = () => {
          x = (x * 1103515245 + 12345) % 2147483648;
          return x / 2147483648 - 0.5;
        };
        for (let i = 0; i < m * k; i++) A[i] = rnd();
        for (let i = 0; i < m; i++) for (let p = 0; p < k; p++) At[p * m + i] = A[i * k + p];
        for (let i = 0; i < k * n; i++) B[i] = rnd();
        const C0 = alloc(m * n);
        for (let i = 0; i < m * n; i++) C0[i] = rnd();
        const ref = new Float64Array(m * n);
        for (let i = 0; i < m; i++)
          for (let j = 0; j < n; j++) {
            let s = C0[i * n + j];
            for (let p = 0; p < k; p++) s += A[i * k + p] * B[p * n + j];
            ref[i * n + j] = s;
          }
        const tol = f32 ? 2e-4 : 1e-12;
        const C = alloc(m * n);
        const ts = tsBackend.workspace(0);
        for (const [w, a, rs, cs] of [
          [ws, A, k, 1],
          [ws, At, 1, m],
          [ts, A, k, 1],
        ] as const) {
          C.set(C0);
          w.gemm(m, n, k, a, 0, rs, cs, B, 0, n, C, 0, n, true);
          for (let i = 0; i < m * n; i++)
            expect(Math.abs(C[i] - ref[i]), `n=${n} f32=${f32}`).toBeLessThan(tol);
        }
      } finally {
        ws.release();
      }
    }
});

it('kernel Cholesky and triangular inverse: L·Lᵀ = G + shift·I, R⁻¹·R = I (definitions), breakdown on an indefinite G', () => {
  const l = 67;
  const ws = wasmBackend()!.workspace(8 * (5 * l * l) + 4096);
  try {
    const G = ws.f64(l * l);
    const L = ws.f64(l * l);
    const R = ws.f64(l * l);
    const Ri = ws.f64(l * l);
    let x = 3;
    const rnd = () => {
      x = (x * 1103515245 + 12345) % 2147483648;
      return x / 2147483648 - 0.5;
    };
    const X = Array.from({ length: 2 * l * l }, rnd);
    for (let i = 0; i < l; i++)
      for (let j = 0; j < l; j++) {
        let s = 0;
        for (let p = 0; p < 2 * l; p++) s += X[p * l + i] * X[p * l + j];
        G[i * l + j] = s;
      }
    const shift = 0.25;
    expect(ws.choleskyLower!(G, l, shift, 1e-12, L)).toBe(1);
    let err = 0;
    for (let i = 0; i < l; i++)
      for (let j = 0; j < l; j++) {
        let s = 0;
        for (let p = 0; p < l; p++) s += L[i * l + p] * L[j * l + p];
        err = Math.max(err, Math.abs(s - G[i * l + j] - (i === j ? shift : 0)));
        if (j > i) expect(L[i * l + j]).toBe(0);
      }
    expect(err).toBeLessThan(1e-12 * l);
    for (let i = 0; i < l; i++) for (let j = 0; j < l; j++) R[i * l + j] = L[j * l + i];
    expect(ws.invertUpper!(R, l, Ri)).toBe(true);
    let e2 = 0;
    for (let i = 0; i < l; i++)
      for (let j = 0; j < l; j++) {
        let s = 0;
        for (let p = 0; p < l; p++) s += Ri[i * l + p] * R[p * l + j];
        e2 = Math.max(e2, Math.abs(s - (i === j ? 1 : 0)));
      }
    expect(e2).toBeLessThan(1e-12);
    G[5 * l + 5] = -1; // not positive definite any more
    expect(ws.choleskyLower!(G, l, 0, 1e-12, L)).toBe(0);
  } finally {
    ws.release();
  }
});
