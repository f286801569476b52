// Wide bands (50–200 px, issue 16): the grouped step-sum profile of src-main/engine/clean/banding-wide.ts,
// part of `--banding auto|rows|columns|both`. Its constants were chosen on camera, moon, page, text and
// phantom (test/fixtures/images) and on samples/map-sheet.png and ledger-page.png; colour-slide.png is the
// held-out check. Measured before this test was written (RMS 4, noise σ 3, seeds 1–6, both axes, inside
// analyseBanding 'auto', 96 banded cases on these 8 images plus gel-scan.tif): the wide pass never lowered
// the PSNR; it removed ≥ 80 % of the stripe energy in 44 cases (87–100 % where it acted, except page.png
// columns, 53–83 %: its justified text starts at the same column on every line, a content edge shaped like
// a band edge, and phantom.png, 31 %). Known misses (left untouched, not tested as passing): text and page
// rows, most phantom cases, and the cases where the guards find the bands uncertain.
import { describe, expect, it } from 'vitest';
import { wideBandProfile } from '../../src-main/engine/clean/banding-wide';
import { decodeImage } from '../../src-main/node/image/decode';
import { wideRemoval } from './banding-removal';
import { bandProfile, damage, fixtureGray, type Gray } from './helpers';

async function sampleGray(file: string): Promise<Gray> {
  const d = await decodeImage(`samples/${file}`);
  return { width: d.width, height: d.height, data: Float32Array.from(d.planes[0]) };
}

describe('wide bands, 50–200 px, RMS 4, noise σ 3, --banding rows|columns', () => {
  const cases: Array<[string, 'rows' | 'columns', () => Promise<Gray>]> = [
    ['moon.png', 'rows', () => fixtureGray('moon.png')],
    ['samples/map-sheet.png', 'rows', () => sampleGray('map-sheet.png')],
    ['samples/colour-slide.png (held out)', 'rows', () => sampleGray('colour-slide.png')],
    ['samples/colour-slide.png (held out)', 'columns', () => sampleGray('colour-slide.png')],
    ['samples/ledger-page.png (held out)', 'columns', () => sampleGray('ledger-page.png')],
  ];
  for (const [name, axis, load] of cases)
    for (const seed of [1, 2])
      it(`${name}, ${axis}, seed ${seed}: ≥ 80 % of the stripe energy removed and PSNR up by ≥ 2 dB`, async () => {
        const r = wideRemoval(await load(), axis, seed);
        expect(r.removed).toBeGreaterThanOrEqual(0.8);
        expect(r.after - r.before).toBeGreaterThan(2);
      });

  it('samples/map-sheet.png, rows, seed 4 (a previous version made it 1.4 dB worse): ≥ 80 % removed, PSNR up', async () => {
    const r = wideRemoval(await sampleGray('map-sheet.png'), 'rows', 4);
    expect(r.removed).toBeGreaterThanOrEqual(0.8);
    expect(r.after).toBeGreaterThan(r.before + 2);
  });

  it('--banding auto includes the wide pass: moon.png wide row bands are found and ≥ 80 % removed', async () => {
    const r = wideRemoval(await fixtureGray('moon.png'), 'rows', 1, true);
    expect(r.removed).toBeGreaterThanOrEqual(0.8);
    expect(r.after).toBeGreaterThan(r.before + 2);
  });

  // Before the paper-only retry (banding-wide-checks.ts sampleLines `background`), page.png's wide row bands
  // were left in place in 6 of 6 seeds (one seed made 0.61 dB worse by the narrow pass's text-line halo);
  // measured with it: 97.6–100 % removed, +4.23…+4.31 dB, seeds 1–6.
  for (const seed of [1, 2, 3])
    it(`page.png (dense text) wide row bands, seed ${seed}: found on the paper in --banding auto, ≥ 90 % removed, PSNR up ≥ 3 dB`, async () => {
      const r = wideRemoval(await fixtureGray('page.png'), 'rows', seed, true);
      expect(r.removed).toBeGreaterThanOrEqual(0.9);
      expect(r.after).toBeGreaterThan(r.before + 3);
    });

  it('page.png wide row bands with the edge inside a line of text (seed 102): found from the paper between the letters, ≥ 90 % removed', async () => {
    // Before the paper's own valid share (0.2 of the lines, not 0.5), this edge at row 90 was never significant.
    const r = wideRemoval(await fixtureGray('page.png'), 'rows', 102, true);
    expect(r.removed).toBeGreaterThanOrEqual(0.9);
    expect(r.after).toBeGreaterThan(r.before + 3);
  });

  it('the subtracted profile holds only the bands: its correlation with the true profile is above 0.9', async () => {
    const img = await fixtureGray('moon.png');
    const truth = bandProfile(img.height, 4, 50, 200, 2);
    const noisy = damage(img, { sigma: 3, seed: 9, rows: truth });
    const p = wideBandProfile(noisy, img.width, img.height, 'rows', 255).profile;
    let pt = 0;
    let pp = 0;
    let tt = 0;
    for (let i = 0; i < p.length; i++) {
      pt += p[i] * truth[i];
      pp += p[i] * p[i];
      tt += truth[i] * truth[i];
    }
    expect(pt / Math.sqrt(pp * tt)).toBeGreaterThan(0.9);
  });

  for (const name of ['camera.png', 'moon.png', 'page.png', 'text.png', 'phantom.png'])
    it(`${name} with noise σ 3 and no bands: the wide detector finds none (a horizon is one step, not a band)`, async () => {
      const img = await fixtureGray(name);
      const noisy = damage(img, { sigma: 3, seed: 9 });
      for (const axis of ['rows', 'columns'] as const)
        expect(wideBandProfile(noisy, img.width, img.height, axis, 255).detected, axis).toBe(false);
    });
});

describe('edges next to the border are content', () => {
  it('samples/film-plate-16bit.tif: its unexposed rebate (steps 18 px from each end) is not a wide band', async () => {
    const d = await decodeImage('samples/film-plate-16bit.tif');
    for (const axis of ['rows', 'columns'] as const)
      expect(wideBandProfile(d.planes[0], d.width, d.height, axis, 65535).detected, axis).toBe(false);
  });
});

describe('the wide pass never makes an image worse (fixtures, both axes, seeds 1–4)', () => {
  for (const name of ['camera.png', 'moon.png', 'page.png', 'text.png', 'phantom.png'])
    for (const axis of ['rows', 'columns'] as const)
      it(`${name}, ${axis}: for every seed, either nothing is removed or the PSNR rises`, async () => {
        const img = await fixtureGray(name);
        for (const seed of [1, 2, 3, 4]) {
          const r = wideRemoval(img, axis, seed);
          if (r.removed !== 0) expect(r.after, `seed ${seed}`).toBeGreaterThan(r.before);
          expect(r.after, `seed ${seed}`).toBeGreaterThanOrEqual(r.before);
        }
      });
});
