// Per-stage times of the whole-plane factorisation (factor-path.bench.ts): the steps randomizedSvd takes
// with the CLI settings (f32, q = 2, reuse finish; engine/linalg/randomized-svd.ts, reuse-finish.ts),
// re-run one by one on the same engine pieces and timed separately, so the table shows where factorMs goes.
// Stages: the Gaussian test matrix (ziggurat), the 5 products with A, the 5 orthonormalisations
// (CholeskyQR2 with a Householder fallback, qr.ts), the small SVD (Jacobi on the l×l R) with the accuracy
// estimate's eigenvalues, and the U/V assembly (2 products with the l×k small factors, copies out).
import { performance } from 'node:perf_hooks';
import type { Backend, FloatArray } from '../src-main/engine/linalg';
import { squaredSingularValues } from '../src-main/engine/linalg/accuracy-estimate';
import { jacobiSvdIn } from '../src-main/engine/linalg/jacobi-svd';
import { Orthonormalizer } from '../src-main/engine/linalg/qr';
import { Rng } from '../src-main/engine/linalg/random';
import { randomizedSvdBytes } from '../src-main/engine/linalg/randomized-svd';
import { fillNormalZiggurat } from '../src-main/engine/linalg/ziggurat';
import { median } from './timing';

const STAGES = [
  'test matrix Ω (ziggurat)',
  'products with A (5)',
  'orthonormalisation (5)',
  'small SVD + estimate',
  'U/V assembly',
] as const;

/** One pass of the CLI's steps; adds each stage's wall ms to `ms`. */
function onePass(
  plane: Float32Array,
  m: number,
  n: number,
  k: number,
  l: number,
  b: Backend,
  ms: number[],
): void {
  const ws = b.workspace(randomizedSvdBytes(m, n, k, l, 1, true));
  try {
    let t = performance.now();
    const lap = (stage: number) => {
      const now = performance.now();
      ms[stage] += now - t;
      t = now;
    };
    const A = ws.f32(m * n);
    A.set(plane.subarray(0, m * n));
    const Om = ws.f32(n * l);
    const Y = ws.f32(m * l);
    const Z = ws.f32(n * l);
    const orth = new Orthonormalizer(ws, Math.max(m, n), l, true);
    const Ry = ws.f64(l * l);
    const Rz = ws.f64(l * l);
    t = performance.now();
    fillNormalZiggurat(new Rng(1), Om);
    lap(0);
    const mulA = (X: FloatArray, out: FloatArray) => ws.gemm(m, l, n, A, 0, n, 1, X, 0, l, out, 0, l, false);
    const mulAt = (X: FloatArray, out: FloatArray) => ws.gemm(n, l, m, A, 0, 1, n, X, 0, l, out, 0, l, false);
    mulA(Om, Y);
    lap(1);
    orth.run(Y, m, l, undefined, false);
    lap(2);
    for (let it = 0; it < 2; it++) {
      mulAt(Y, Z);
      lap(1);
      orth.run(Z, n, l, it === 1 ? Rz : undefined, it === 1);
      lap(2);
      mulA(Z, Y);
      lap(1);
      orth.run(Y, m, l, it === 1 ? Ry : undefined, true);
      lap(2);
    }
    squaredSingularValues(Rz, l);
    const small = jacobiSvdIn({ rows: l, cols: l, data: Ry }, ws);
    lap(3);
    const Uk = ws.f32(l * k);
    const Vk = ws.f32(l * k);
    for (let i = 0; i < l; i++)
      for (let j = 0; j < k; j++) {
        Uk[i * k + j] = small.U.data[i * small.U.cols + j];
        Vk[i * k + j] = small.V.data[i * small.V.cols + j];
      }
    const U = ws.f32(m * k);
    const V = ws.f32(n * k);
    ws.gemm(m, k, l, Y, 0, l, 1, Uk, 0, k, U, 0, k, false);
    ws.gemm(n, k, l, Z, 0, l, 1, Vk, 0, k, V, 0, k, false);
    Float32Array.from(U);
    Float32Array.from(V);
    lap(4);
  } finally {
    ws.release();
  }
}

/**
 * Markdown rows (header included) of the median wall ms per stage over `reps` passes after one untimed
 * pass, for a rows×cols f32 plane at rank k with l columns on backend `b`.
 */
export function stageTable(
  plane: Float32Array,
  rows: number,
  cols: number,
  k: number,
  l: number,
  b: Backend,
  reps = 5,
): string[] {
  const runs: number[][] = [];
  for (let r = 0; r <= reps; r++) {
    const ms = STAGES.map(() => 0);
    onePass(plane, rows, cols, k, l, b, ms);
    if (r > 0) runs.push(ms);
  }
  const med = STAGES.map((_, s) => median(runs.map((ms) => ms[s])));
  const total = med.reduce((a, x) => a + x, 0);
  const rowsOut = ['| stage | ms (median) | share |', '|---|---|---|'];
  STAGES.forEach((name, s) => {
    rowsOut.push(`| ${name} | ${med[s].toFixed(1)} | ${((100 * med[s]) / total).toFixed(0)} % |`);
  });
  rowsOut.push(`| sum | ${total.toFixed(1)} | |`);
  return rowsOut;
}
