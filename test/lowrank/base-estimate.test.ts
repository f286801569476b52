// The crop's base-layer estimate on flat arrays (engine/lowrank/base-estimate.ts) against the candidate
// search's own estimate (engine/lowrank/solve.ts estimateErrorAtBytes): the same number, bit for bit.
import { describe, expect, it } from 'vitest';
import { jacobiSvd } from '../../src-main/engine/linalg';
import { jacobiSvdColumns } from '../../src-main/engine/linalg/jacobi-svd';
import { baseErrorAtBytes, tileColumns } from '../../src-main/engine/lowrank/base-estimate';
import { factorPlane } from '../../src-main/engine/lowrank/factorise';
import { estimateErrorAtBytes } from '../../src-main/engine/lowrank/solve';
import { decodeImage } from '../../src-main/node/image/decode';
import { image } from '../helpers/fixtures';

/** A centred w×h crop of a plane, as f64. */
function crop(p: ArrayLike<number>, width: number, height: number, w: number, h: number) {
  const [x0, y0] = [(width - w) >> 1, (height - h) >> 1];
  const out = new Float64Array(w * h);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) out[y * w + x] = p[(y0 + y) * width + x0 + x];
  return out;
}

describe('baseErrorAtBytes', () => {
  it.each([
    ['camera.png', 32, 0.25],
    ['moon.png', 64, 0.1],
    ['text.png', 32, 1],
  ])(
    'equals estimateErrorAtBytes on %s (tiles of %i, %f bpp)',
    async (name, tile, bpp) => {
      const img = await decodeImage(image(name));
      // 200×150: edge tiles are partial, and some tall enough (m > 2n) for the QR-first path of the Jacobi SVD.
      const [w, h] = [200, 150];
      const plane = crop(img.planes[0], img.width, img.height, w, h);
      const bytes = (bpp * w * h) / 8;
      const factors = factorPlane(plane, w, h, { tile, meanRemoval: true, meanStep: 255 / 1020 });
      const want = estimateErrorAtBytes([{ factors, weight: 1, stepScale: 1 }], bytes, 255);
      const tiles = tileColumns(plane, w, h, tile, 255 / 1020);
      const got = baseErrorAtBytes([{ tiles, weight: 1, stepScale: 1 }], bytes, 255);
      expect(want).toBeGreaterThan(0);
      expect(got).toBe(want);
    },
    60_000,
  );

  it('weights and scales colour planes the same way', () => {
    const [w, h] = [96, 80];
    const planes = [0, 1, 2].map((c) =>
      Float64Array.from(
        { length: w * h },
        (_, i) => 128 + 60 * Math.sin((i % w) / (7 + c)) * Math.cos(i / w / 9),
      ),
    );
    const weights = [0.6, 0.2, 0.2];
    const scales = weights.map((x) => Math.sqrt(weights[0] / x));
    const want = estimateErrorAtBytes(
      planes.map((p, k) => ({
        factors: factorPlane(p, w, h, { tile: 32, meanRemoval: true, meanStep: 255 / 1020 }),
        weight: weights[k],
        stepScale: scales[k],
      })),
      300,
      255,
    );
    const got = baseErrorAtBytes(
      planes.map((p, k) => ({
        tiles: tileColumns(p, w, h, 32, 255 / 1020),
        weight: weights[k],
        stepScale: scales[k],
      })),
      300,
      255,
    );
    expect(got).toBe(want);
  });
});

describe('jacobiSvdColumns', () => {
  it("gives jacobiSvd's σ and non-negligible columns bit for bit, and zero columns for negligible σ", () => {
    // 9×4 (tall: QR first) of rank 2, and its 4×9 transpose: column 2 repeats column 0 and column 3 is zero.
    const rows = 9;
    const cols = 4;
    const a = new Float64Array(rows * cols);
    for (let i = 0; i < rows; i++) {
      a[i * cols] = i + 1;
      a[i * cols + 1] = Math.cos(i);
      a[i * cols + 2] = i + 1;
    }
    const at = new Float64Array(rows * cols);
    for (let i = 0; i < rows; i++) for (let j = 0; j < cols; j++) at[j * rows + i] = a[i * cols + j];
    for (const [m, n, data] of [
      [rows, cols, a],
      [cols, rows, at],
    ] as const) {
      const full = jacobiSvd({ rows: m, cols: n, data });
      const c = jacobiSvdColumns({ rows: m, cols: n, data });
      expect(c.s).toEqual(full.s);
      const r = full.s.length;
      const col = (x: Float64Array, len: number, k: number) => Array.from(x.subarray(k * len, k * len + len));
      const fullCol = (M: Float64Array, len: number, k: number) =>
        Array.from({ length: len }, (_, i) => M[i * r + k]);
      let zeroed = 0;
      for (let k = 0; k < r; k++)
        for (const [x, X, len] of [
          [c.u, full.U.data, m],
          [c.v, full.V.data, n],
        ] as const) {
          if (col(x, len, k).every((e) => e === 0)) {
            // Left out only where jacobiSvd completes: σ ≤ σ₁·ε·(rows rotated ≤ max(m, n)).
            expect(full.s[k]).toBeLessThanOrEqual(full.s[0] * 2.220446049250313e-16 * Math.max(m, n));
            zeroed++;
          } else expect(col(x, len, k)).toEqual(fullCol(X as Float64Array, len, k));
        }
      expect(zeroed).toBeGreaterThan(0);
      expect(full.s[1]).toBeGreaterThan(1);
    }
  });
});
