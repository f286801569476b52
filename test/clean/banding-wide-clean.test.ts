// Clean scans the wide-band pass must leave alone (src-main/engine/clean/banding-wide.ts), on images its
// constants were not chosen on (scikit-image 0.19.3 sample data, grey; test/fixtures/banding/SOURCES.md):
// - color-grey.png, a colour wheel's luma: a steep gradient the whole image shares. With noise σ 3 (seed 3)
//   a slope of ~0.7 grey levels per pixel read as steps of ~2.8 at single noisy positions, and a chained
//   column profile made the scan 1.2 dB worse (σ 5: 0.66 dB), before the slope beside each group was taken off.
// - rocket-crop.png, the top-left 256×256 of rocket.jpg's luma, as it is: an uncut chain of four row links
//   (0.8–1.0 grey levels) that the direct levels do not show was removed without the level check.
import { describe, expect, it } from 'vitest';
import { analyseBanding, subtractProfiles } from '../../src-main/engine/clean';
import { wideBandProfile } from '../../src-main/engine/clean/banding-wide';
import { autoBandingRemoved, bandProfile, damage, folderGray, psnr, rounded } from './helpers';

const opts = { maxValue: 255 };

describe('clean unseen scans are left as they are', () => {
  it('color-grey.png as it is, with noise σ 3 (seeds 1–3) and σ 5 (seed 3): --banding auto returns the input', async () => {
    const g = await folderGray('banding', 'color-grey.png');
    const cases = [
      { sigma: 0, seed: 1 },
      { sigma: 5, seed: 3 },
    ];
    for (const seed of [1, 2, 3]) cases.push({ sigma: 3, seed });
    for (const c of cases) {
      const dam = c.sigma === 0 ? g.data : damage(g, c);
      expect(autoBandingRemoved(dam, g), `σ ${c.sigma} seed ${c.seed}`).toEqual(dam);
    }
  });

  it('rocket-crop.png as it is and with noise σ 3 (seeds 1–3): --banding auto returns the input', async () => {
    const g = await folderGray('banding', 'rocket-crop.png');
    const cases = [{ sigma: 0, seed: 1 }];
    for (const seed of [1, 2, 3]) cases.push({ sigma: 3, seed });
    for (const c of cases) {
      const dam = c.sigma === 0 ? g.data : damage(g, c);
      expect(autoBandingRemoved(dam, g), `σ ${c.sigma} seed ${c.seed}`).toEqual(dam);
    }
  });

  it('rocket-crop.png rows: the uncut chain of the whole lines is not detected (its levels hold a third of its variation)', async () => {
    const g = await folderGray('banding', 'rocket-crop.png');
    const w = wideBandProfile(g.data, g.width, g.height, 'rows', 255, false, true);
    expect(w.detected).toBe(false);
  });
});

describe('bands on a shared gradient are still found', () => {
  it('color-grey.png with wide column and row bands (50–200 px, RMS 4, noise σ 3): PSNR up on every seed 1–4', async () => {
    // The slope beside a group is taken off its step, so band edges on the gradient are read at their size.
    const g = await folderGray('banding', 'color-grey.png');
    for (const seed of [1, 2, 3, 4]) {
      const columns = bandProfile(g.width, 4, 50, 200, 100 + seed);
      const dam = damage(g, { sigma: 3, seed, columns });
      const a = analyseBanding(dam, g.width, g.height, 'auto', opts);
      const out = rounded(
        subtractProfiles(
          dam,
          g.width,
          g.height,
          a.removeRows ? a.rows.profile : null,
          a.removeColumns ? a.columns.profile : null,
        ),
      );
      expect(psnr(out, g.data), `seed ${seed}`).toBeGreaterThanOrEqual(psnr(dam, g.data));
    }
  });
});
