// The whole-plane fast path (engine/lowrank/factorise.ts, used by `compress --tile 0` and the app): f32
// WebAssembly SIMD products, q = 2 power steps with every step re-orthonormalised (Halko, Martinsson &
// Tropp 2011, SIAM Review 53(2), Alg. 4.4), and the a-posteriori accuracy check of randomized-svd.ts that
// adds steps while the estimated Frobenius error exceeds 1.01× the Eckart–Young optimum.
// Reference optima: test/fixtures/reference/rank_approx_images.json, `frobenius_error` at k = √Σ_{i>k}σᵢ²
// from numpy 1.24.2 linalg.svd (LAPACK dgesdd), Debian 12 (see that folder's notes.md); synthetic
// matrices have a known spectrum (withSpectrum), so their optimum is exact.
// Uses the built worker dist/workers/linalg.js for the pool (run `npm run build` first, as `npm test` does).
import { describe, expect, it } from 'vitest';
import { type Matrix, randomizedSvd } from '../../src-main/engine/linalg';
import { factorPlane, PLANE_ACCURACY, setPlaneBackend } from '../../src-main/engine/lowrank/factorise';
import { decodeImage } from '../../src-main/node/image/decode';
import { prepareFactorPath } from '../../src-main/node/parallel/factor-path';
import { closeSharedLinalgPool, type LinalgPool } from '../../src-main/node/parallel/pool';
import { compressDecoded } from '../../src-main/node/services/compress';
import { image, reference } from '../helpers/fixtures';
import { frob, residual, withSpectrum } from './helpers';
import { useTwoPools } from './pools';

const ref = reference('rank_approx_images.json');

let one: LinalgPool;
let two: LinalgPool;
useTwoPools(
  (p) => ({ one, two } = p),
  async () => {
    setPlaneBackend(undefined);
    await closeSharedLinalgPool();
  },
);

/** ‖A − A_k‖_F of a factorisation's first k components, in f64 against the f64 samples. */
function errorAt(a: Matrix, f: { s: Float64Array; U: Matrix; V: Matrix }, k: number): number {
  return frob(residual(a, f.U, f.s, f.V, k));
}

function optimum(sigma: ArrayLike<number>, k: number): number {
  let s = 0;
  for (let i = k; i < sigma.length; i++) s += sigma[i] * sigma[i];
  return Math.sqrt(s);
}

describe('whole-plane fast path (f32 SIMD, q = 2 + accuracy check) vs the LAPACK optimum', () => {
  for (const file of ['camera.png', 'moon.png']) {
    it(`${file}: rank 20, 50 and 100 within 1.01× the Eckart–Young optimum (rank_approx_images.json)`, async () => {
      const im = ref.images.find((x: { file: string }) => x.file === file);
      const d = await decodeImage(image(file));
      const [rows, cols] = im.shape_rows_cols;
      const a: Matrix = { rows, cols, data: Float64Array.from(d.planes[0]) };
      for (const k of [20, 50, 100]) {
        const f = factorPlane(d.planes[0], cols, rows, {
          tile: 0,
          meanRemoval: false,
          meanStep: 1,
          maxRank: k,
        });
        const t = f.tiles[0];
        // The fast path ran: f32 factors, one component beyond the cap.
        expect(t.U.data).toBeInstanceOf(Float32Array);
        expect(t.s.length).toBe(k + 1);
        const opt = im.rank_k.find((r: { k: number }) => r.k === k).frobenius_error;
        const ratio = errorAt(a, t, k) / opt;
        expect(ratio, `${file} k=${k}`).toBeGreaterThanOrEqual(1 - 1e-9);
        expect(ratio, `${file} k=${k}`).toBeLessThanOrEqual(PLANE_ACCURACY);
      }
    });
  }

  it('f32 with re-orthonormalised power steps matches f64 accuracy (synthetic σᵢ = 1000/(1+i) + 1)', () => {
    const sigma = Float64Array.from({ length: 300 }, (_, i) => 1000 / (1 + i) + 1);
    const a = withSpectrum(400, 300, sigma, 5);
    const a32: Matrix = { rows: 400, cols: 300, data: Float32Array.from(a.data) };
    const k = 30;
    const f32 = randomizedSvd(a32, k, { precision: 'f32', powerIters: 2, seed: 3 });
    const f64 = randomizedSvd(a, k, { precision: 'f64', powerIters: 2, seed: 3 });
    const r32 = errorAt(a, f32, k) / optimum(sigma, k);
    const r64 = errorAt(a, f64, k) / optimum(sigma, k);
    expect(r32).toBeLessThanOrEqual(1.01);
    expect(Math.abs(r32 - r64)).toBeLessThan(1e-4);
  });
});

describe('a-posteriori accuracy check (randomizedSvd `accuracy`)', () => {
  // σᵢ = (1+i)^−0.3 with k = 40 of 240: a slowly decaying spectrum, where subspace iteration contracts the
  // error only by about (σ_{l+1}/σ_k)² ≈ 0.9 per half-step.
  const sigma = Float64Array.from({ length: 240 }, (_, i) => (1 + i) ** -0.3);
  const a = withSpectrum(300, 240, sigma, 21);
  const a32: Matrix = { rows: 300, cols: 240, data: Float32Array.from(a.data) };
  const k = 40;

  it('slow decay: q = 2 alone misses 1.01×, the check adds power steps until the error is within it', () => {
    const plain = randomizedSvd(a32, k, { precision: 'f32', powerIters: 2, seed: 1 });
    expect(errorAt(a, plain, k) / optimum(sigma, k)).toBeGreaterThan(1.01);
    const checked = randomizedSvd(a32, k, { precision: 'f32', powerIters: 2, seed: 1, accuracy: 1.01 });
    expect(checked.powerIters).toBeGreaterThan(2);
    expect(checked.ratioEstimate).toBeLessThanOrEqual(1.01);
    expect(errorAt(a, checked, k) / optimum(sigma, k)).toBeLessThanOrEqual(1.01);
  });

  it('the estimate is conservative here and never below the true ratio by more than 0.1 %', () => {
    for (const q of [1, 2, 3, 4]) {
      const r = randomizedSvd(a32, k, {
        precision: 'f32',
        powerIters: q,
        seed: 1,
        accuracy: 1.000001,
        maxPowerIters: q,
      });
      expect(r.powerIters).toBe(q);
      const truth = errorAt(a, r, k) / optimum(sigma, k);
      expect(r.ratioEstimate, `q=${q}`).toBeGreaterThan(truth - 1e-3);
    }
  });

  it('fast decay: the check passes at q = 2 (no extra products), same factors as without it', () => {
    const fast = Float64Array.from({ length: 240 }, (_, i) => 1000 / (1 + i) ** 2 + 0.01);
    const b = withSpectrum(300, 240, fast, 22);
    const b32: Matrix = { rows: 300, cols: 240, data: Float32Array.from(b.data) };
    const checked = randomizedSvd(b32, 20, { precision: 'f32', powerIters: 2, seed: 2, accuracy: 1.01 });
    const plain = randomizedSvd(b32, 20, { precision: 'f32', powerIters: 2, seed: 2 });
    expect(checked.powerIters).toBe(2);
    expect(errorAt(b, checked, 20) / optimum(fast, 20)).toBeLessThanOrEqual(1.01);
    // The check only reads; the last Z is made orthonormal, so the factors agree to f32 rounding.
    for (let i = 0; i < 20; i++) expect(Math.abs(checked.s[i] - plain.s[i])).toBeLessThan(1e-4 * plain.s[0]);
  });

  it('rejects a target ≤ 1 and a cap below q', () => {
    expect(() => randomizedSvd(a32, k, { accuracy: 1 })).toThrow(RangeError);
    expect(() => randomizedSvd(a32, k, { powerIters: 3, accuracy: 1.01, maxPowerIters: 2 })).toThrow(
      RangeError,
    );
  });
});

describe('whole plane read in place', () => {
  it("factorPlane keeps the caller's f32 plane as the tile data (no copy) and never changes it", async () => {
    const d = await decodeImage(image('camera.png'));
    const plane = d.planes[0];
    const before = Float32Array.from(plane);
    const t = factorPlane(plane, 512, 512, { tile: 0, meanRemoval: false, meanStep: 1, maxRank: 50 })
      .tiles[0];
    expect(t.data.buffer).toBe(plane.buffer);
    expect(t.U.data).toBeInstanceOf(Float32Array); // the randomized path ran
    // With mean removal the view is copied first: the caller's samples stay as they were.
    const m = factorPlane(plane, 512, 512, { tile: 0, meanRemoval: true, meanStep: 1, maxRank: 50 }).tiles[0];
    expect(m.meanQ).not.toBe(0);
    expect(m.data.buffer).not.toBe(plane.buffer);
    expect(m.data[0]).toBe(plane[0] - m.meanQ);
    expect(Buffer.compare(Buffer.from(plane.buffer), Buffer.from(before.buffer))).toBe(0);
  });
});

describe('determinism: 1 vs 2 threads', () => {
  it('factorPlane gives bit-identical σ, U, V on the wasm backend and on pools of 1 and 2 threads (extra steps included)', async () => {
    const d = await decodeImage(image('camera.png'));
    const run = (backend?: LinalgPool) =>
      factorPlane(d.planes[0], 512, 512, { tile: 0, meanRemoval: false, meanStep: 1, maxRank: 50, backend })
        .tiles[0];
    const base = run();
    const before = two.splitProducts;
    for (const pool of [one, two]) {
      const t = run(pool);
      expect(Array.from(t.s)).toEqual(Array.from(base.s));
      expect(Array.from(t.U.data)).toEqual(Array.from(base.U.data));
      expect(Array.from(t.V.data)).toEqual(Array.from(base.V.data));
    }
    expect(two.splitProducts).toBeGreaterThan(before);
    // The slow-decay case takes extra power steps: still identical.
    const sigma = Float64Array.from({ length: 240 }, (_, i) => (1 + i) ** -0.3);
    const a32: Matrix = {
      rows: 300,
      cols: 240,
      data: Float32Array.from(withSpectrum(300, 240, sigma, 21).data),
    };
    const opts = { precision: 'f32' as const, powerIters: 2, seed: 1, accuracy: 1.01 };
    const r1 = randomizedSvd(a32, 40, { ...opts, backend: one });
    const r2 = randomizedSvd(a32, 40, { ...opts, backend: two });
    expect(r1.powerIters).toBeGreaterThan(2);
    expect(r2.powerIters).toBe(r1.powerIters);
    expect(Array.from(r2.s)).toEqual(Array.from(r1.s));
    expect(Array.from(r2.U.data)).toEqual(Array.from(r1.U.data));
    expect(Array.from(r2.V.data)).toEqual(Array.from(r1.V.data));
  });

  it('setPlaneBackend: the registered pool is what factorPlane uses by default', async () => {
    const d = await decodeImage(image('moon.png'));
    setPlaneBackend(two);
    const before = two.splitProducts;
    const viaDefault = factorPlane(d.planes[0], 512, 512, {
      tile: 0,
      meanRemoval: false,
      meanStep: 1,
      maxRank: 50,
    });
    expect(two.splitProducts).toBeGreaterThan(before);
    setPlaneBackend(undefined);
    const single = factorPlane(d.planes[0], 512, 512, {
      tile: 0,
      meanRemoval: false,
      meanStep: 1,
      maxRank: 50,
    });
    expect(Array.from(viaDefault.tiles[0].U.data)).toEqual(Array.from(single.tiles[0].U.data));
  });

  it('compress --rank 40 --tile 0 writes byte-identical .rkf files with 1 and 2 threads', async () => {
    const d = await decodeImage(image('camera.png'));
    await prepareFactorPath(); // once per process; the backend is then swapped below
    const bytes: Uint8Array[] = [];
    for (const pool of [one, two]) {
      setPlaneBackend(pool);
      const { bytes: b, report } = await compressDecoded(d, { budget: { kind: 'rank', rank: 40 }, tile: 0 });
      expect(report.ranks[0].rank).toBe(40);
      bytes.push(b);
    }
    setPlaneBackend(undefined);
    expect(Buffer.compare(Buffer.from(bytes[0]), Buffer.from(bytes[1]))).toBe(0);
  });
});
