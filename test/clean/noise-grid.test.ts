// The 8×8 JPEG grid test (src-main/engine/clean/noise-grid.ts) and the noise estimate that leaves out the Haar
// blocks straddling its boundaries (noise-estimate.ts). The positive fixture is scikit-image's coins.png coded by
// sharp at JPEG quality 50 and decoded (test/fixtures/jpeg/SOURCES.md); cropped by an odd number of pixels its
// grid straddles one column and one row of aligned 2×2 blocks in four. Before the test, the clean crop read
// σ̂ 0.62 (the uncropped decode 0.33), above the 0.6 rounding level, so `--noise auto` sent the JPEG blocking
// through the correlated-noise path and changed 40 952 samples of a clean scan; with σ 3 added it read 3.33
// (+10.9 %).
import { describe, expect, it } from 'vitest';
import { estimateNoiseSigma } from '../../src-main/engine/clean';
import { codingGrid, signTestCritical } from '../../src-main/engine/clean/noise-grid';
import { prepareClean } from '../../src-main/engine/clean/pipeline';
import { damage, fixtureGray, folderGray, type Gray } from './helpers';

const jpegBorn = () => folderGray('jpeg', 'coins-q50.png');

/** g without its first `left` columns and `top` rows. */
function cropped(g: Gray, left: number, top: number): Gray {
  const width = g.width - left;
  const height = g.height - top;
  const data = new Float32Array(width * height);
  for (let y = 0; y < height; y++)
    data.set(g.data.subarray((y + top) * g.width + left, (y + top + 1) * g.width), y * width);
  return { width, height, data };
}

const sigma = (g: Gray, data = g.data) => estimateNoiseSigma(data, g.width, g.height, 0, 255);

describe('signTestCritical (one-sided sign test, Bin(n, ½); exact binomial sums, common practice)', () => {
  it('n = 10: P(X ≥ 9) = 11/1024 ≤ 0.05 < P(X ≥ 8) = 56/1024, so k = 9', () => {
    expect(signTestCritical(10, 0.05)).toBe(9);
    expect(signTestCritical(10, 11 / 1024)).toBe(9);
    expect(signTestCritical(10, 11 / 1024 - 1e-9)).toBe(10);
  });
  it('n + 1 when even n wins of n are not rare enough (P = 1/8 > 0.1 for n = 3)', () => {
    expect(signTestCritical(3, 0.1)).toBe(4);
  });
  it('large n (2⁻ⁿ below the smallest double): n = 20000 at 1.25e-7 gives 10366 (scipy 1.10.1 stats.binom.sf: P(X ≥ 10366) = 1.174e-7, P(X ≥ 10365) = 1.266e-7)', () => {
    expect(signTestCritical(20000, 1e-6 / 8)).toBe(10366);
  });
});

describe('codingGrid', () => {
  it('finds the grid of the JPEG-born fixture at every crop, at the phase the crop moves it to', async () => {
    const g = await jpegBorn();
    // Boundaries between pixels 8k − 1 and 8k; cropping c pixels moves the straddling window to (7 − c) mod 8.
    expect(codingGrid(g.data, g.width, g.height)).toEqual({ x: 7, y: 7 });
    const c1 = cropped(g, 1, 1);
    expect(codingGrid(c1.data, c1.width, c1.height)).toEqual({ x: 6, y: 6 });
    const c35 = cropped(g, 3, 5);
    expect(codingGrid(c35.data, c35.width, c35.height)).toEqual({ x: 4, y: 2 });
    // Still found with σ 3 added.
    expect(codingGrid(damage(c1, { sigma: 3, seed: 5 }), c1.width, c1.height)).toEqual({ x: 6, y: 6 });
  });

  it('finds nothing on PNG-born images, clean or with σ 5, at crops 0 and 1 (the PNG coins among them)', async () => {
    const images: Gray[] = [
      await folderGray('banding', 'coins.png'),
      await folderGray('texture', 'gravel-crop.png'),
    ];
    for (const name of ['camera.png', 'moon.png', 'page.png', 'text.png', 'phantom.png'])
      images.push(await fixtureGray(name));
    for (const img of images)
      for (const g of [img, cropped(img, 1, 1)])
        for (const data of [g.data, damage(g, { sigma: 5, seed: 9 })])
          expect(codingGrid(data, g.width, g.height)).toBeNull();
  });
});

describe('the noise estimate on a JPEG-born scan whose grid straddles the Haar blocks', () => {
  it('the clean crop reads what the uncropped decode reads (within 10 %), below the 0.6 rounding level', async () => {
    const g = await jpegBorn();
    const whole = sigma(g);
    const crop = sigma(cropped(g, 1, 1));
    expect(Math.abs(crop / whole - 1)).toBeLessThan(0.1);
    expect(crop).toBeLessThan(0.6);
  });

  it('σ 3 added: σ̂ within 10 % of 3 (the issue requirement of noise-estimate.test.ts)', async () => {
    const c1 = cropped(await jpegBorn(), 1, 1);
    expect(Math.abs(sigma(c1, damage(c1, { sigma: 3, seed: 103 })) / 3 - 1)).toBeLessThan(0.1);
  });

  it('--noise auto leaves the clean crop untouched (no noise found to remove)', async () => {
    const c1 = cropped(await jpegBorn(), 1, 1);
    const prep = prepareClean(
      { width: c1.width, height: c1.height, channels: 1, bitDepth: 8, planes: [c1.data] },
      { noise: 'auto', banding: 'off' },
    );
    expect(prep.method).toBe('off');
    expect(prep.noiseSkipped).toMatch(/below 0\.60 grey levels/);
  });
});
