// Noise estimate (Donoho & Johnstone 1994 MAD of the finest diagonal Haar detail, least-textured half of
// the blocks) on fixture images with synthetic Gaussian noise of known σ. Issue requirement: within 10 %.
import { describe, expect, it } from 'vitest';
import { estimateNoiseSigma, MAD_TO_SIGMA } from '../../src-main/engine/clean';
import { damage, fixtureGray, randomProfile } from './helpers';

describe('estimateNoiseSigma', () => {
  it('MAD_TO_SIGMA is Φ⁻¹(3/4) = 0.6744897501960817 (standard normal quantile; common statistical constant)', () => {
    expect(MAD_TO_SIGMA).toBeCloseTo(0.6744897501960817, 15);
  });

  for (const name of ['camera.png', 'moon.png', 'text.png', 'page.png'])
    for (const sigma of [5, 10, 20])
      it(`${name}, σ = ${sigma}: σ̂ within 10 % of σ`, async () => {
        const img = await fixtureGray(name);
        const noisy = damage(img, { sigma, seed: 100 + sigma });
        const est = estimateNoiseSigma(noisy, img.width, img.height, 0, 255);
        expect(Math.abs(est / sigma - 1)).toBeLessThan(0.1);
      });

  it('column and row stripes do not inflate σ̂ (the Haar HH detail cancels rank-one stripe patterns exactly)', async () => {
    const img = await fixtureGray('moon.png');
    const plain = estimateNoiseSigma(damage(img, { sigma: 5, seed: 3 }), img.width, img.height, 0, 255);
    const striped = estimateNoiseSigma(
      damage(img, {
        sigma: 5,
        seed: 3,
        columns: randomProfile(img.width, 8, 4),
        rows: randomProfile(img.height, 8, 5),
      }),
      img.width,
      img.height,
      0,
      255,
    );
    expect(Math.abs(striped / plain - 1)).toBeLessThan(0.05);
  });

  it('a clean 8-bit image reads far below 1 grey level on smooth content (moon)', async () => {
    const img = await fixtureGray('moon.png');
    expect(estimateNoiseSigma(img.data, img.width, img.height, 0, 255)).toBeLessThan(0.6);
  });
});
