// Banding on images the detector's constants were not chosen on: the fixtures transposed (rows become
// columns), mirrored and rescaled ×1.5 (bilinear), so text lines, edges and textures sit at new positions
// and spacings. Checks are properties against the known synthetic truth (no published reference values
// exist for banding removal; test/fixtures/reference/notes.md, "Not covered").
import { describe, expect, it } from 'vitest';
import { analyseBanding, subtractProfiles } from '../../src-main/engine/clean';
import { bandProfile, damage, fixtureGray, type Gray, psnr, rounded, sineProfile } from './helpers';

const opts = { maxValue: 255 };

/** The image with rows and columns exchanged. */
function transpose(g: Gray): Gray {
  const out = new Float32Array(g.data.length);
  for (let y = 0; y < g.height; y++)
    for (let x = 0; x < g.width; x++) out[x * g.height + y] = g.data[y * g.width + x];
  return { width: g.height, height: g.width, data: out };
}

/** Mirrored left–right and rescaled by `f` with bilinear interpolation (pixel centres aligned), rounded. */
function mirroredRescaled(g: Gray, f: number): Gray {
  const w = Math.round(g.width * f);
  const h = Math.round(g.height * f);
  const at = (x: number, y: number) => g.data[y * g.width + (g.width - 1 - x)];
  const out = new Float32Array(w * h);
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++) {
      const sx = Math.max(0, Math.min(g.width - 1.001, (x + 0.5) / f - 0.5));
      const sy = Math.max(0, Math.min(g.height - 1.001, (y + 0.5) / f - 0.5));
      const x0 = Math.floor(sx);
      const y0 = Math.floor(sy);
      const ax = sx - x0;
      const ay = sy - y0;
      const top = (1 - ax) * at(x0, y0) + ax * at(x0 + 1, y0);
      const bottom = (1 - ax) * at(x0, y0 + 1) + ax * at(x0 + 1, y0 + 1);
      out[y * w + x] = Math.round((1 - ay) * top + ay * bottom);
    }
  return { width: w, height: h, data: out };
}

const variants: Array<[string, () => Promise<Gray>]> = [
  ['page.png ×1.5', async () => mirroredRescaled(await fixtureGray('page.png'), 1.5)],
  ['page.png transposed', async () => transpose(await fixtureGray('page.png'))],
  ['text.png ×1.5', async () => mirroredRescaled(await fixtureGray('text.png'), 1.5)],
];

describe('dense text on unseen layouts', () => {
  for (const [name, load] of variants)
    it(`${name} with noise σ 3, seeds 1–3: the ink's halo along the lines of text is not banding (nothing removed)`, async () => {
      // page.png ×1.5 was taken for row banding (robust strength 1.24–1.29 grey levels) before the
      // background-only profile needed 2 levels.
      const g = await load();
      for (const seed of [1, 2, 3]) {
        const a = analyseBanding(damage(g, { sigma: 3, seed }), g.width, g.height, 'auto', opts);
        expect(a.direction, `seed ${seed}`).toBe('none');
      }
    });

  it('page.png ×1.5 with row banding (period 12.5, RMS 4): found from the paper, PSNR up', async () => {
    const g = mirroredRescaled(await fixtureGray('page.png'), 1.5);
    const rows = sineProfile(g.height, 4, 12.5);
    const dam = damage(g, { sigma: 3, seed: 5, rows });
    const a = analyseBanding(dam, g.width, g.height, 'auto', opts);
    expect(a.removeRows).toBe(true);
    const out = rounded(subtractProfiles(dam, g.width, g.height, a.rows.profile, null));
    expect(psnr(out, g.data)).toBeGreaterThan(psnr(dam, g.data) + 1);
  });
});

describe('wide bands (50–200 px, RMS 4, noise σ 3) on unseen layouts', () => {
  it('page.png transposed, column bands, seeds 1–2: found on the paper, ≥ 90 % removed, and the removed part is the bands only', async () => {
    // Measured when written: 96.2 % and 98.7 % removed (+4.22, +4.24 dB); before the paper-only retry, none.
    const g = transpose(await fixtureGray('page.png'));
    for (const seed of [1, 2]) {
      const truth = bandProfile(g.width, 4, 50, 200, seed);
      const dam = damage(g, { sigma: 3, seed, columns: truth });
      const a = analyseBanding(dam, g.width, g.height, 'auto', opts);
      expect(a.removeColumns, `seed ${seed}`).toBe(true);
      expect(a.removeRows, `seed ${seed}`).toBe(false);
      const p = a.columns.profile;
      let e = 0;
      let t = 0;
      let pt = 0;
      let pp = 0;
      for (let i = 0; i < g.width; i++) {
        e += (truth[i] - p[i]) ** 2;
        t += truth[i] ** 2;
        pt += p[i] * truth[i];
        pp += p[i] * p[i];
      }
      expect(1 - e / t, `seed ${seed}`).toBeGreaterThanOrEqual(0.9);
      // The removed part (the report's "removed" image, one profile per column) follows the true bands,
      // not the lines of text: correlation with the truth above 0.95.
      expect(pt / Math.sqrt(pp * t), `seed ${seed}`).toBeGreaterThan(0.95);
      const out = rounded(subtractProfiles(dam, g.width, g.height, null, p));
      expect(psnr(out, g.data)).toBeGreaterThan(psnr(dam, g.data) + 3);
    }
  });
});
