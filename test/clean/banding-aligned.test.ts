// Wide band edges chosen by their alignment across the lines (src-main/engine/clean/band-aligned.ts), and
// banding.ts's choice between that reading and the grouped step sum (banding-wide.ts).
// color-grey.png (scikit-image 0.19.3's colour wheel as luma; test/fixtures/banding/SOURCES.md) is one of
// the unseen images the aligned reading was checked on, not chosen on: on its rows the step sum dropped true
// edges where the wheel's rim and sectors meet them (seed 3: 38.6 % of the band energy removed, +1.54 dB;
// seed 5: 52.1 %, +1.84 dB), the aligned reading kept them (measured when written: 99.9 %, +4.56 dB;
// 100 %, +4.62 dB).

import { describe, expect, it } from 'vitest';
import { analyseBanding, subtractProfiles } from '../../src-main/engine/clean';
import { alignedBands } from '../../src-main/engine/clean/band-aligned';
import { bandAxis } from '../../src-main/engine/clean/band-lines';
import { removedShare } from './banding-removal';
import { autoBandingRemoved, bandProfile, damage, folderGray, type Gray, psnr, rounded } from './helpers';

const opts = { maxValue: 255 };

describe('wide row bands on a busy unseen image', () => {
  for (const seed of [3, 5])
    it(`color-grey.png, rows, 50–200 px, RMS 4, noise σ 3, seed ${seed}: ≥ 90 % removed and PSNR up ≥ 3 dB (the step sum alone: ≤ 55 %)`, async () => {
      const g = await folderGray('banding', 'color-grey.png');
      const rows = bandProfile(g.height, 4, 50, 200, 100 + seed);
      const dam = damage(g, { sigma: 3, seed, rows });
      const a = analyseBanding(dam, g.width, g.height, 'auto', opts);
      expect(a.removeRows).toBe(true);
      expect(removedShare(rows, a.rows.profile)).toBeGreaterThan(0.9);
      const out = rounded(
        subtractProfiles(dam, g.width, g.height, a.rows.profile, a.removeColumns ? a.columns.profile : null),
      );
      expect(psnr(out, g.data)).toBeGreaterThan(psnr(dam, g.data) + 3);
    });
});

describe('clean scans stay untouched', () => {
  for (const [folder, name] of [
    ['banding', 'coins.png'],
    ['banding', 'microaneurysms.png'],
    ['images', 'camera.png'],
  ])
    it(`${name} as it is and with noise σ 3 (seeds 1–2): --banding auto returns the input`, async () => {
      const g = await folderGray(folder, name);
      for (const c of [
        { sigma: 0, seed: 1 },
        { sigma: 3, seed: 1 },
        { sigma: 3, seed: 2 },
      ]) {
        const dam = c.sigma === 0 ? g.data : damage(g, c);
        expect(autoBandingRemoved(dam, g), `σ ${c.sigma} seed ${c.seed}`).toEqual(dam);
      }
    });
});

describe('alignedBands', () => {
  /** 300 × 512 grey 100 with noise σ 3, plus `add(x)` on every row. */
  function flat(add: (x: number) => number): Gray {
    const g: Gray = { width: 300, height: 512, data: new Float32Array(300 * 512).fill(100) };
    const data = damage(g, { sigma: 3, seed: 7 });
    for (let i = 0; i < data.length; i++) data[i] = Math.round(data[i] + add(i % 300));
    return { ...g, data };
  }
  const read = (g: Gray) => alignedBands(bandAxis(g.data, g.width, g.height, 'columns', 255));

  it('two band edges every line shares (+6 at x = 100, −4 at x = 200) are found at their places and sizes', () => {
    const r = read(flat((x) => (x > 100 ? 6 : 0) + (x > 200 ? -4 : 0)));
    expect(r?.steps).toBe(2);
    const p = r?.profile ?? new Float64Array(300);
    // Each step's standard error is about 0.4 levels here (16 strips of 32 lines, noise σ 3): within 1.
    expect(Math.abs(p[101] - p[100] - 6)).toBeLessThan(1);
    expect(Math.abs(p[201] - p[200] + 4)).toBeLessThan(1);
    for (let x = 0; x < 299; x++) if (x !== 100 && x !== 200) expect(p[x + 1]).toBe(p[x]);
  });

  it('a thin dark line across every line (3 px, 30 levels) and a ramp of 0.5 level/px are no band edges', () => {
    expect(read(flat((x) => (x >= 150 && x < 153 ? -30 : 0)))).toBeNull();
    expect(read(flat((x) => 0.5 * x))).toBeNull();
  });
});
