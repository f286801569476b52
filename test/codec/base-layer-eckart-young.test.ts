// The base layer of a two-layer file against the Eckart–Young theorem (Eckart & Young, Psychometrika 1(3):
// 211–218, 1936): the best rank-k approximation of A in the Frobenius norm leaves exactly Σ_{i>k} σ_i²
// = ‖A‖² − Σ_{i≤k} σ_i². The reference σ_i² are the eigenvalues of AᵀA from a cyclic Jacobi eigenvalue
// iteration written here (Golub & Van Loan, Matrix Computations, 4th ed., 2013, §8.5.2–8.5.3), independent of
// the engine's SVDs.
import { beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { decodeImageLayers } from '../../src-main/engine/codec/image-file';
import { initEngine } from '../../src-main/engine/linalg';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { factorPlane } from '../../src-main/engine/lowrank/factorise';
import { decodeImage, hashSamples } from '../../src-main/node/image/decode';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { image } from '../helpers/fixtures';

const W = 80;
const H = 96;
/** Relative agreement of squared errors: both sides are float64 sums of ~8000 terms (common practice). */
const REL = 1e-9;

beforeAll(async () => {
  await initEngine();
});

/** Eigenvalues of the symmetric n×n matrix `a` (row-major, overwritten), largest first: cyclic Jacobi. */
function jacobiEigenvalues(a: Float64Array, n: number): number[] {
  for (let sweep = 0; sweep < 60; sweep++) {
    let off = 0;
    for (let p = 0; p < n; p++) for (let q = p + 1; q < n; q++) off += a[p * n + q] ** 2;
    if (off < 1e-30 * (a.reduce((s, v) => s + v * v, 0) || 1)) break;
    for (let p = 0; p < n; p++)
      for (let q = p + 1; q < n; q++) {
        const apq = a[p * n + q];
        if (apq === 0) continue;
        // Golub & Van Loan Alg. 8.5.1 (symSchur2): c, s zeroing a_pq.
        const tau = (a[q * n + q] - a[p * n + p]) / (2 * apq);
        const t = (tau >= 0 ? 1 : -1) / (Math.abs(tau) + Math.sqrt(1 + tau * tau));
        const c = 1 / Math.sqrt(1 + t * t);
        const s = t * c;
        for (let k = 0; k < n; k++) {
          const akp = a[k * n + p];
          const akq = a[k * n + q];
          a[k * n + p] = c * akp - s * akq;
          a[k * n + q] = s * akp + c * akq;
        }
        for (let k = 0; k < n; k++) {
          const apk = a[p * n + k];
          const aqk = a[q * n + k];
          a[p * n + k] = c * apk - s * aqk;
          a[q * n + k] = s * apk + c * aqk;
        }
      }
  }
  return Array.from({ length: n }, (_, i) => a[i * n + i]).sort((x, y) => y - x);
}

/** ‖A‖² − Σ_{i≤k} σ_i² for every k, A the H×W plane. */
function discardedEnergies(plane: ArrayLike<number>): number[] {
  const g = new Float64Array(W * W);
  let total = 0;
  for (let y = 0; y < H; y++)
    for (let i = 0; i < W; i++) {
      const ai = plane[y * W + i];
      total += ai * ai;
      for (let j = 0; j < W; j++) g[i * W + j] += ai * plane[y * W + j];
    }
  const ev = jacobiEigenvalues(g, W);
  const out = [total];
  let kept = 0;
  for (const e of ev) {
    kept += Math.max(0, e);
    out.push(Math.max(0, total - kept));
  }
  return out;
}

async function cropOf(name: string, x0: number, y0: number): Promise<DecodedImage> {
  const img = await decodeImage(image(name));
  const plane = new Float32Array(W * H);
  for (let y = 0; y < H; y++)
    plane.set(img.planes[0].subarray((y0 + y) * img.width + x0, (y0 + y) * img.width + x0 + W), y * W);
  return {
    ...img,
    width: W,
    height: H,
    planes: [plane],
    rawBytes: W * H,
    meta: { ...img.meta, icc: undefined },
  };
}

/**
 * A synthetic ledger-like plate (low rank plus noise, where a base pays): ruled lines every 8 rows, two column
 * rules, shading that is a product of a row and a column ramp, and seeded Gaussian noise of σ grey levels.
 */
function ruledPlate(sigma: number): DecodedImage {
  const plate = { file: 'plate.png', width: W, height: H, channels: 1, bitDepth: 8, colour: 'gray' };
  let seed = 12345;
  const uniform = () => {
    seed = (Math.imul(seed, 1103515245) + 12345) >>> 0;
    return (seed + 0.5) / 2 ** 32;
  };
  const gauss = () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
  const plane = new Float32Array(W * H);
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++) {
      const shade = 150 + 60 * (y / H) * (0.5 + x / W);
      const rule = y % 8 === 7 || x === 20 || x === 61 ? -90 : 0;
      plane[y * W + x] = Math.max(0, Math.min(255, Math.round(shade + rule + sigma * gauss())));
    }
  return {
    ...plate,
    planes: [plane],
    rawBytes: W * H,
    sourceSha256: hashSamples([plane], 8),
    meta: {},
  } as unknown as DecodedImage;
}

describe('base layer against Eckart–Young', () => {
  it('before quantisation: the whole-plane rank-k truncation leaves exactly the discarded σ² energy', async () => {
    const img = await cropOf('camera.png', 200, 120);
    const plane = img.planes[0];
    const ref = discardedEnergies(plane);
    const f = factorPlane(plane, W, H, { tile: 0, meanRemoval: false, meanStep: 255 / 1020 });
    const t = f.tiles[0];
    for (const k of [0, 1, 4, 12, 30]) {
      let e = 0;
      for (let y = 0; y < H; y++)
        for (let x = 0; x < W; x++) {
          let v = 0;
          for (let i = 0; i < k; i++) v += t.s[i] * t.U.data[y * t.U.cols + i] * t.V.data[x * t.V.cols + i];
          e += (plane[y * W + x] - v) ** 2;
        }
      expect(Math.abs(e / ref[k] - 1), `rank ${k}`).toBeLessThan(1e-6);
    }
  });

  it.each([
    [1, 1],
    [3, 2],
  ] as const)(
    'a ruled, shaded plate with noise σ %s at %s bpp, tile 0: the report gives the optimum at the base rank, and the quantised base is no better',
    (sigma, bpp) => {
      const img = ruledPlate(sigma);
      const r = encodeScan(img, {
        budget: { kind: 'bpp', bpp },
        tile: 0,
        compressors: COMPRESSORS,
        layers: 'auto',
      });
      const k = r.ranks[0].ranks[0];
      // A base of some rank was kept (else the check below is the trivial rank-0 case).
      expect(k).toBeGreaterThan(0);
      const ref = discardedEnergies(img.planes[0]);
      expect(Math.abs(r.errors.frobeniusOptimal ** 2 / ref[k] - 1)).toBeLessThan(REL);
      // The written base (quantised, float) cannot beat the optimum at its rank, and the report's base error
      // is that of the base as decoded from the file.
      const { base } = decodeImageLayers(r.bytes, 'x.rkf');
      let e = 0;
      for (let i = 0; i < base[0].length; i++) e += (img.planes[0][i] - base[0][i]) ** 2;
      expect(e).toBeGreaterThanOrEqual(ref[k] * (1 - REL));
      // Two layers (mixed: a base and a residual), so the report's error is the base's own.
      expect(r.layers.residualBytes).toBeGreaterThan(0);
      expect(Math.abs(r.errors.frobenius ** 2 / e - 1)).toBeLessThan(REL);
    },
  );
});
