// The wide pass before the narrow one (src-main/engine/clean/banding.ts wideFirst) and the richer chain
// (banding-wide.ts step 7). On a sloping background a running median lags behind a wide band's edge, so
// the narrow pass took the ramps beside each edge for narrow banding; subtracting that profile first cancelled
// most of each edge and hid the bands from the wide pass. Measured before the change with this damage (bands
// of bandProfile seed s, noise σ 3 seed 9, --banding auto): camera.png rows seed 105: 15 % of the band energy
// removed, +0.4 dB; text.png rows seed 101: 25 %, +0.8 dB; moon.png columns seed 108: 66 %, +2.4 dB. After:
// 99–100 %, +4.3…+4.4 dB. Camera.png rows seeds 104 and 107 rose from 16 % and 2 % to 54 % (an edge inside
// the coat is still missed; not tested as passing).
import { describe, expect, it } from 'vitest';
import { analyseBanding } from '../../src-main/engine/clean';
import { wideRemoval } from './banding-removal';
import { damage, fixtureGray, randomProfile, sineProfile } from './helpers';

describe('wide bands the narrow pass mistook for narrow banding', () => {
  const cases: Array<[string, 'rows' | 'columns', number]> = [
    ['camera.png', 'rows', 105],
    ['text.png', 'rows', 101],
    ['moon.png', 'columns', 108],
  ];
  for (const [name, axis, seed] of cases)
    it(`${name}, ${axis}, seed ${seed}: ≥ 90 % of the band energy removed, PSNR up ≥ 3 dB`, async () => {
      const r = wideRemoval(await fixtureGray(name), axis, seed, true);
      expect(r.removed).toBeGreaterThanOrEqual(0.9);
      expect(r.after - r.before).toBeGreaterThan(3);
    });

  // The wide pass looks at the image first only when the narrow pass's profile is then no longer detected:
  // real narrow stripes stay detected, and on page.png the wide pass found bands in them (with the first
  // version of wideFirst, column stripes RMS 3 went from 60 % removed to −812 %, −7.1 dB).
  it('page.png with narrow column stripes (RMS 3) or row banding (period 12.5): no wide bands are added', async () => {
    const img = await fixtureGray('page.png');
    const stripes = damage(img, { sigma: 3, seed: 9, columns: randomProfile(img.width, 3, 11) });
    expect(analyseBanding(stripes, img.width, img.height, 'auto', { maxValue: 255 }).columns.wideSteps).toBe(
      undefined,
    );
    const sine = damage(img, { sigma: 3, seed: 9, rows: sineProfile(img.height, 4, 12.5) });
    expect(analyseBanding(sine, img.width, img.height, 'auto', { maxValue: 255 }).rows.wideSteps).toBe(
      undefined,
    );
  });

  // After narrow stripes are removed, the wide pass sees their estimation error; a cut chain took two of
  // its steps for band edges (banding.ts findWideBands afterNarrow). Measured on main with this damage:
  // randomProfile seed 13, 72.0 % removed with 2 wide edges; now 94.1 %, no wide edge.
  it('page.png with column stripes RMS 8 (seed 13): no wide edges added to the narrow profile, ≥ 90 % removed', async () => {
    const img = await fixtureGray('page.png');
    const truth = randomProfile(img.width, 8, 13);
    const noisy = damage(img, { sigma: 3, seed: 9, columns: truth });
    const a = analyseBanding(noisy, img.width, img.height, 'auto', { maxValue: 255 });
    expect(a.columns.wideSteps).toBe(undefined);
    let e0 = 0;
    let e1 = 0;
    for (let i = 0; i < truth.length; i++) {
      e0 += truth[i] ** 2;
      e1 += (truth[i] - (a.removeColumns ? a.columns.profile[i] : 0)) ** 2;
    }
    expect(1 - e1 / e0).toBeGreaterThanOrEqual(0.9);
  });
});
