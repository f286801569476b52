// The crop's base-layer estimate (engine/lowrank/base-estimate.ts: Gram-matrix tile SVDs, flat arrays) against
// the candidate search's own estimate on Jacobi tile SVDs (estimateErrorAtBytes below, formerly in engine/lowrank/solve.ts).
import { describe, expect, it } from 'vitest';
import { baseErrorAtBytes, cropBaseError, tileColumns } from '../../src-main/engine/lowrank/base-estimate';
import { buildCandidate, estimatedError, prefixForBytes } from '../../src-main/engine/lowrank/candidate';
import { factorPlane } from '../../src-main/engine/lowrank/factorise';
import { hillClimb, type PlaneInput, stepGrid } from '../../src-main/engine/lowrank/solve';

/**
 * The reference: the candidate search's own estimate, as residual-first computed it before lowrank/base-estimate
 * (the coarse step scan of solve.ts solveBytes: quantised components and the cost model at ratio 1, no refit).
 */
function estimateErrorAtBytes(inputs: PlaneInput[], payload: number, maxValue: number): number {
  const grid = stepGrid(maxValue);
  const climb = hillClimb(grid.length, (k) => {
    const c = buildCandidate(inputs, grid[k], { refit: false });
    return estimatedError(c, prefixForBytes(c.cumCost, payload, 1));
  });
  return climb[0].err;
}

import { decodeImage } from '../../src-main/node/image/decode';
import { image } from '../helpers/fixtures';

/**
 * Relative agreement asked of the two estimates: they differ only by the tile SVDs' rounding (≈ 1e-12 in
 * the components the search keeps), measured 0–1.3e-11 on scans and test images; 1e-9 leaves room while
 * still failing on any real change of the search (one entry quantised differently moves it by more).
 */
const AGREE = 1e-9;

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
    'agrees with estimateErrorAtBytes on %s (tiles of %i, %f bpp)',
    async (name, tile, bpp) => {
      const img = await decodeImage(image(name));
      // 200×150: edge tiles are partial, some of them wide and some tall (m > 2n: QR first in the Jacobi SVD).
      const [w, h] = [200, 150];
      const plane = crop(img.planes[0], img.width, img.height, w, h);
      const bytes = (bpp * w * h) / 8;
      const factors = factorPlane(plane, w, h, { tile, meanRemoval: true, meanStep: 255 / 1020 });
      const want = estimateErrorAtBytes([{ factors, weight: 1, stepScale: 1 }], bytes, 255);
      const tiles = tileColumns(plane, w, h, tile, 255 / 1020);
      const got = baseErrorAtBytes([{ tiles, weight: 1, stepScale: 1 }], bytes, 255);
      expect(want).toBeGreaterThan(0);
      expect(Math.abs(got - want)).toBeLessThanOrEqual(AGREE * want);
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
    expect(want).toBeGreaterThan(0);
    expect(Math.abs(got - want)).toBeLessThanOrEqual(AGREE * want);
  });

  it('cropBaseError (one column store and entry buffer for every tiling) equals the lowest per-tiling estimate', () => {
    // 100×90: partial edge tiles of both sides; three planes share the store one after another.
    const [w, h] = [100, 90];
    const planes = [0, 1, 2].map((c) =>
      Float64Array.from(
        { length: w * h },
        (_, i) => 128 + 50 * Math.sin((i % w) / (5 + c)) + ((i * 7919) % 13),
      ),
    );
    const [weights, scales] = [
      [0.5, 0.3, 0.2],
      [1, 1.3, 1.6],
    ];
    for (const bytes of [200, 900]) {
      const each = [16, 32].map((tile) =>
        baseErrorAtBytes(
          planes.map((p, k) => ({
            tiles: tileColumns(p, w, h, tile, 255 / 1020),
            weight: weights[k],
            stepScale: scales[k],
          })),
          bytes,
          255,
        ),
      );
      const got = cropBaseError({
        crop: planes,
        width: w,
        height: h,
        weights,
        scales,
        bytes,
        maxValue: 255,
        tiles: [16, 32],
      });
      expect(each[0]).not.toBe(each[1]);
      expect(got).toBe(Math.min(...each));
    }
  });
});
