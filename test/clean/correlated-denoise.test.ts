// Denoising spatially correlated noise with the measured spectrum (noise-psd-plan.ts → group-low-rank.ts
// whitening, wiener-groups.ts per-coefficient variances) against the white-noise path on the same input.
import { describe, expect, it } from 'vitest';
import { levelJobs, prepareClean } from '../../src-main/engine/clean';
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

  it('0, 1, 2, 3 and 5 workers give bit-identical output with the correlated model and its coarse levels', async () => {
    const t = await fixtureGray('camera.png', crop);
    const n = filteredNoise(t.width, t.height, BINOMIAL_3, 10, 22);
    const noisy = t.data.map((v, i) => Math.min(255, Math.max(0, Math.round(v + n[i]))));
    // The coarse pass is on: two levels (96×96, 48×48) share the workers with the full size.
    const prep = prepareClean(
      { width: t.width, height: t.height, channels: 1, bitDepth: 8, planes: [Float32Array.from(noisy)] },
      { noise: 'auto', banding: 'off' },
    );
    expect(prep.coarse?.map((L) => [L.width, L.height])).toEqual([
      [96, 96],
      [48, 48],
    ]);
    const outs: Buffer[] = [];
    for (const workers of [0, 1, 2, 3, 5]) {
      const r = await cleanDecoded(greyDecoded(t, [noisy]), { noise: 'auto', banding: 'off', workers });
      expect(r.report.noiseColour?.colour).toBe('correlated');
      outs.push(Buffer.from(r.planes[0].buffer));
    }
    for (const o of outs.slice(1)) expect(o.equals(outs[0])).toBe(true);
  }, 120_000);
});

describe('level jobs: the full size and the coarse levels shared over the workers', () => {
  const sizes = [
    { width: 2000, height: 1500 },
    { width: 1000, height: 750 },
    { width: 500, height: 375 },
  ];
  for (const workers of [1, 2, 3, 4, 7])
    it(`${workers} worker(s): every row of every level is in exactly one job`, () => {
      const jobs = levelJobs(sizes, workers);
      expect(jobs).toHaveLength(workers);
      sizes.forEach((s, l) => {
        const rows = new Array<number>(s.height).fill(0);
        for (const j of jobs.flat().filter((j) => j.level === l))
          for (let y = j.rowStart; y < j.rowEnd; y++) rows[y]++;
        expect(rows.every((c) => c === 1)).toBe(true);
      });
    });

  it('2 workers: the pixel shares are within 1 % of equal (level 1 and 2 whole on different workers)', () => {
    const jobs = levelJobs(sizes, 2);
    const load = jobs.map((list) =>
      list.reduce((a, j) => a + (j.rowEnd - j.rowStart) * sizes[j.level].width, 0),
    );
    const total = sizes.reduce((a, s) => a + s.width * s.height, 0);
    for (const l of load) expect(Math.abs(l / (total / 2) - 1)).toBeLessThan(0.01);
    expect(jobs.map((list) => list.filter((j) => j.level > 0).length)).toEqual([1, 1]);
  });
});
