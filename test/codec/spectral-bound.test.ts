// The reported Eckart–Young spectral bound at rank k is σ_{k+1} of the plane (Eckart & Young 1936,
// Mirsky 1960; as stated in Halko, Martinsson & Tropp, SIAM Review 2011, §10). The reference σ come
// from the engine's full-spectrum path, which test/engine checks against LAPACK (numpy 1.24.2 dgesdd).
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { singularValues } from '../../src-main/engine/linalg';
import { decodeImage } from '../../src-main/node/image/decode';
import { compressFile } from '../../src-main/node/services/compress';
import { image, reference } from '../helpers/fixtures';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-bound-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('whole-plane spectral bound', () => {
  it('camera.png --rank 20 --tile 0 reports σ21 and the Frobenius optimum of rank_approx_images.json', async () => {
    const img = await decodeImage(image('camera.png'));
    const s = singularValues({ rows: img.height, cols: img.width, data: Float64Array.from(img.planes[0]) });
    const r = await compressFile(image('camera.png'), join(dir, 'c.rkf'), {
      budget: { kind: 'rank', rank: 20 },
      tile: 0,
    });
    expect(r.ranks[0].rank).toBe(20);
    expect(Math.abs(r.errors.spectralBound - s[20]) / s[20]).toBeLessThan(1e-3);
    // numpy 1.24.2 (LAPACK dgesdd): Frobenius error of the optimal rank-20 approximation of camera.png.
    const ref = reference('rank_approx_images.json').images.find(
      (x: { file: string }) => x.file === 'camera.png',
    );
    const k20 = ref.rank_k.find((x: { k: number }) => x.k === 20);
    expect(Math.abs(r.errors.frobeniusOptimal - k20.frobenius_error) / k20.frobenius_error).toBeLessThan(
      1e-3,
    );
    const psnrOpt = k20.psnr_eckart_young_db;
    const fromFrob = 20 * Math.log10((255 * Math.sqrt(512 * 512)) / r.errors.frobeniusOptimal);
    expect(Math.abs(fromFrob - psnrOpt)).toBeLessThan(0.01);
  });
});
