// The worker-thread backend (src-main/node/parallel) against the single-thread engine.
// Uses the built worker dist/workers/linalg.js (run `npm run build` first, as `npm test` does).
// Reference: the single-thread WebAssembly path of the same engine, itself checked against LAPACK and
// ml-matrix in reference-svd.test.ts / properties.test.ts. Style rule (STYLE.md): one worker and two
// workers give bit-identical results.
import { describe, expect, it } from 'vitest';
import {
  defaultBackend,
  matmul,
  matmulTransA,
  randomizedSvd,
  singularValues,
} from '../../src-main/engine/linalg';
import { closeSharedLinalgPool, LinalgPool, sharedLinalgPool } from '../../src-main/node/parallel/pool';
import { randomMatrix, withSpectrum } from './helpers';
import { useTwoPools } from './pools';

let one: LinalgPool;
let two: LinalgPool;
useTwoPools((p) => ({ one, two } = p));

describe('LinalgPool (calling thread + worker_threads over a shared WebAssembly.Memory)', () => {
  it('products A·B and Aᵀ·B are bit-identical to the single-thread kernel, f32 and f64, odd sizes', () => {
    const before = two.splitProducts;
    for (const f32 of [true, false]) {
      const A = randomMatrix(301, 257, 1, f32);
      const B = randomMatrix(257, 45, 2, f32);
      const C = randomMatrix(301, 45, 3, f32);
      const ref = matmul(A, B);
      const refT = matmulTransA(A, C);
      for (const pool of [one, two]) {
        expect(Array.from(matmul(A, B, undefined, pool).data)).toEqual(Array.from(ref.data));
        expect(Array.from(matmulTransA(A, C, undefined, pool).data)).toEqual(Array.from(refT.data));
      }
    }
    // The products above are over PARALLEL_MIN_FLOPS: the 2-thread pool really split them (4 calls),
    // the 1-thread pool never splits.
    expect(two.splitProducts - before).toBe(4);
    expect(one.splitProducts).toBe(0);
    expect(one.workerCount).toBe(1);
  });

  it('uneven blocks (9 rows: 4 + 4 + 1, claimed by caller and worker) and accumulate (C += A·B) match one thread exactly', () => {
    for (const accumulate of [false, true]) {
      const [m, n, k] = [9, 250, 1000];
      const A = randomMatrix(m, k, 6, true).data as Float32Array;
      const B = randomMatrix(k, n, 7, true).data as Float32Array;
      const C0 = randomMatrix(m, n, 8, true).data as Float32Array;
      const run = (ws: ReturnType<LinalgPool['workspace']>) => {
        try {
          const [a, b, c] = [ws.f32(m * k), ws.f32(k * n), ws.f32(m * n)];
          a.set(A);
          b.set(B);
          c.set(C0);
          ws.gemm(m, n, k, a, 0, k, 1, b, 0, n, c, 0, n, accumulate);
          return Array.from(c);
        } finally {
          ws.release();
        }
      };
      const bytes = 4 * (m * k + k * n + m * n) + 256;
      const ref = run(defaultBackend().workspace(bytes));
      const before = two.splitProducts;
      expect(run(two.workspace(bytes))).toEqual(ref);
      expect(two.splitProducts - before).toBe(1);
    }
  });

  it('randomizedSvd and singularValues through the pool equal the single-thread results exactly', () => {
    const A = withSpectrum(
      400,
      300,
      Array.from({ length: 100 }, (_, i) => 50 * 0.93 ** i),
      2,
      true,
    );
    const ref = randomizedSvd(A, 20, { seed: 9 });
    const splitsBefore = two.splitProducts;
    const viaTwo = randomizedSvd(A, 20, { seed: 9, backend: two });
    const viaOne = randomizedSvd(A, 20, { seed: 9, backend: one });
    expect(Array.from(viaTwo.s)).toEqual(Array.from(ref.s));
    expect(Array.from(viaOne.s)).toEqual(Array.from(ref.s));
    expect(two.splitProducts).toBeGreaterThan(splitsBefore); // its 400×300×30 products were split
    expect(Array.from(viaTwo.U.data)).toEqual(Array.from(ref.U.data));
    expect(Array.from(singularValues(A, two))).toEqual(Array.from(singularValues(A)));
    // k + p = 70 ≥ 48: the Gram small core (symmetric eigen kernel, kernel Cholesky) runs on both.
    const big = randomizedSvd(A, 60, { seed: 9 });
    const bigTwo = randomizedSvd(A, 60, { seed: 9, backend: two });
    expect(Array.from(bigTwo.s)).toEqual(Array.from(big.s));
    expect(Array.from(bigTwo.V.data)).toEqual(Array.from(big.V.data));
  });

  it('sharedLinalgPool returns one process-wide pool until closed', async () => {
    const a = await sharedLinalgPool();
    const b = await sharedLinalgPool();
    expect(a).toBe(b);
    expect(a.workerCount).toBe(2);
    const A = randomMatrix(64, 48, 4, true);
    expect(Array.from(matmul(A, randomMatrix(48, 16, 5, true), undefined, a).data)).toEqual(
      Array.from(matmul(A, randomMatrix(48, 16, 5, true)).data),
    );
    await closeSharedLinalgPool();
    const c = await sharedLinalgPool();
    expect(c).not.toBe(a);
    await closeSharedLinalgPool();
  });

  it('refuses a second concurrent workspace and a bad worker count with clear messages', async () => {
    const ws = two.workspace(1024);
    expect(() => two.workspace(1024)).toThrow('one computation at a time');
    ws.release();
    await expect(LinalgPool.create({ workers: 0 })).rejects.toThrow(
      'expected integer between 1 and 16 for workers but received 0',
    );
  });
});
