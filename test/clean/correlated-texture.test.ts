// The correlated-noise path's texture fallback (src-main/engine/clean/noise-psd-plan.ts TEXTURE_RATIO): when
// the spectrum measured on the flattest 16×16 blocks predicts more than twice the finest-scale variance the
// white-noise estimate sees, the blocks hold texture, not noise, and the noise is taken as white. On texture
// with no flat part (a crop of scikit-image's gravel.png, test/fixtures/texture/SOURCES.md) and noise filtered
// by a known kernel, the spectrum counts the gravel as noise: with the fallback removed, `--noise-colour auto`
// used it (bounded to 1.1× the fine-scale variance) and lost 5.04 dB (3×3 binomial) and 3.98 dB (5×5 Gaussian)
// on these inputs, against a gain of +0.24 and +0.02 dB with it (0 dB since the texture's share is taken out of
// σ̂ on this verdict: see below).
import { describe, expect, it } from 'vitest';
import { cleanDecoded } from '../../src-main/node/services/clean';
import { BINOMIAL_3, filteredNoise, GAUSSIAN_5 } from './correlated-noise';
import { folderGray, greyDecoded, psnr } from './helpers';

const gravel = () => folderGray('texture', 'gravel-crop.png');

describe('correlated noise on texture with no flat part: the noise is taken as white', () => {
  // [kernel, name, scikit-image 0.19.3 denoise_wavelet (BayesShrink, told the true σ) gain on this exact input,
  // dB; computed as in test/fixtures/texture/SOURCES.md].
  const cases: Array<[number[], string, number]> = [
    [BINOMIAL_3, '3×3 binomial', -0.244],
    [GAUSSIAN_5, '5×5 Gaussian', -0.505],
  ];
  for (const [kernel, name, wavelet] of cases)
    it(`gravel, ${name}-filtered noise σ 10: reported as texture, cleaned as white noise, no worse than the wavelet reference`, async () => {
      const t = await gravel();
      const n = filteredNoise(t.width, t.height, kernel, 10, 31);
      const noisy = t.data.map((v, i) => Math.min(255, Math.max(0, Math.round(v + n[i]))));
      const run = (noiseColour: 'auto' | 'white') =>
        cleanDecoded(greyDecoded(t, [noisy]), { noise: 'auto', banding: 'off', workers: 0, noiseColour });
      const auto = await run('auto');
      const c = auto.report.noiseColour;
      expect(c?.colour).toBe('white');
      expect(c?.source).toBe('measured');
      const excess = Number(/predicts ([0-9.]+) times the fine-scale variance/.exec(c?.reason ?? '')?.[1]);
      // Above TEXTURE_RATIO (2); noise alone measures 0.95–1.05 (noise-psd-plan.ts).
      expect(excess).toBeGreaterThan(2);
      expect(c?.reason).toMatch(/^the flat blocks hold texture/);
      // The white path at the σ̂ left when the texture's share is taken out across three scales (textureFree).
      // Low-pass noise grows with scale as the gravel does, so on this all-texture crop it is all taken as
      // texture and nothing is removed (0 dB; +0.24 and +0.02 dB when σ̂ was used as it stood; h16 measurement).
      const factor = Number(/without the texture's share: ×([0-9.]+)/.exec(c?.reason ?? '')?.[1]);
      expect(factor).toBeLessThan(1);
      // Not worse than the outside reference (scikit-image's NL-means does better here: +0.574 and +0.035 dB).
      const gain = psnr(auto.planes[0], t.data) - psnr(noisy, t.data);
      expect(gain).toBeGreaterThanOrEqual(wavelet);
    }, 60_000);
});
