// Denoising spatially correlated noise with the measured spectrum (noise-psd-plan.ts → group-low-rank.ts
// whitening, wiener-groups.ts per-coefficient variances) against the white-noise path on the same input.
import { describe, expect, it } from 'vitest';
import { cleanDecoded } from '../../src-main/node/services/clean';
import { BINOMIAL_3, filteredNoise, GAUSSIAN_5 } from './correlated-noise';
import { damage, fixtureGray, greyDecoded } from './helpers';

const crop = { x: 128, y: 128, w: 192, h: 192 };

const psnr = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return 10 * Math.log10((255 * 255) / (s / a.length));
};

describe('clean --noise auto on correlated noise', () => {
  const cases: Array<[string, number[], string]> = [
    ['camera.png', BINOMIAL_3, 'binomial'],
    ['moon.png', GAUSSIAN_5, 'Gaussian'],
  ];
  for (const [f, g, name] of cases)
    it(`${f}, ${name}-filtered noise σ 10: the measured spectrum gains more than the white path`, async () => {
      const t = await fixtureGray(f, crop);
      const n = filteredNoise(t.width, t.height, g, 10, 21);
      const noisy = t.data.map((v, i) => Math.min(255, Math.max(0, Math.round(v + n[i]))));
      const gain = async (noiseColour: 'auto' | 'white') => {
        const r = await cleanDecoded(greyDecoded(t, [noisy]), {
          noise: 'auto',
          banding: 'off',
          workers: 0,
          noiseColour,
        });
        return { gain: psnr(r.planes[0], t.data) - psnr(noisy, t.data), report: r.report };
      };
      const model = await gain('auto');
      const white = await gain('white');
      expect(model.report.noiseColour?.colour).toBe('correlated');
      expect(white.report.noiseColour?.colour).toBe('white');
      expect(model.gain).toBeGreaterThan(white.gain + 1.5);
    }, 60_000);

  it('white noise: auto gives the same bytes as --noise-colour white, and reports nothing new', async () => {
    const t = await fixtureGray('camera.png', crop);
    const noisy = damage(t, { sigma: 10, seed: 4 });
    const a = await cleanDecoded(greyDecoded(t, [noisy]), { noise: 'auto', banding: 'off', workers: 0 });
    const w = await cleanDecoded(greyDecoded(t, [noisy]), {
      noise: 'auto',
      banding: 'off',
      workers: 0,
      noiseColour: 'white',
    });
    expect(Buffer.from(a.planes[0].buffer).equals(Buffer.from(w.planes[0].buffer))).toBe(true);
    expect(a.report.noiseColour).toBeUndefined();
  }, 60_000);

  it('0, 1 and 2 workers give bit-identical output with the correlated model', async () => {
    const t = await fixtureGray('camera.png', crop);
    const n = filteredNoise(t.width, t.height, BINOMIAL_3, 10, 22);
    const noisy = t.data.map((v, i) => Math.min(255, Math.max(0, Math.round(v + n[i]))));
    const outs: Buffer[] = [];
    for (const workers of [0, 1, 2]) {
      const r = await cleanDecoded(greyDecoded(t, [noisy]), { noise: 'auto', banding: 'off', workers });
      expect(r.report.noiseColour?.colour).toBe('correlated');
      outs.push(Buffer.from(r.planes[0].buffer));
    }
    expect(outs[1].equals(outs[0])).toBe(true);
    expect(outs[2].equals(outs[0])).toBe(true);
  }, 120_000);
});
