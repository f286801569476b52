// The white-noise estimate must be seen in the flat parts of a scan (src-main/engine/clean/noise-evidence.ts):
// a clean silhouette whose only unclipped blocks are its outline is left untouched, the same scan with noise
// added is still cleaned.
import { describe, expect, it } from 'vitest';
import { denoiseInProcess, finishClean, prepareClean } from '../../src-main/engine/clean';
import { flatEvidence, MIN_FLAT_BLOCKS } from '../../src-main/engine/clean/noise-evidence';
import { damage, fixtureInput, type Gray, psnr } from './helpers';

/** A clean, anti-aliased disc (0 inside, 255 outside, box-filtered over 4×4 subsamples), rounded to integers. */
function disc(size = 192): Gray {
  const data = new Float32Array(size * size);
  const c = size / 2;
  const r = size / 3;
  for (let y = 0; y < size; y++)
    for (let x = 0; x < size; x++) {
      let inside = 0;
      for (let sy = 0; sy < 4; sy++)
        for (let sx = 0; sx < 4; sx++)
          if ((x + (sx + 0.5) / 4 - c) ** 2 + (y + (sy + 0.5) / 4 - c) ** 2 < r * r) inside++;
      data[y * size + x] = Math.round(255 * (1 - inside / 16));
    }
  return { width: size, height: size, data };
}

/** A smooth ramp 40…200 (no edges), so that every block is flat up to whatever noise is added. */
function ramp(size = 192): Gray {
  const data = new Float32Array(size * size);
  for (let y = 0; y < size; y++) for (let x = 0; x < size; x++) data[y * size + x] = 40 + (160 * x) / size;
  return { width: size, height: size, data };
}

describe('flatEvidence', () => {
  it('white noise on a smooth ramp holds itself up: most blocks stay, σ̂ near the true σ', () => {
    const g = ramp();
    const noisy = damage(g, { sigma: 4, seed: 3 });
    const e = flatEvidence(noisy, g.width, g.height, 4, 0, 255);
    // 96² = 9216 blocks, 94² with a full neighbourhood; χ²₈ 90 % keeps about nine in ten of pure noise.
    expect(e.blocks).toBeGreaterThan(7000);
    expect(e.sigma).toBeGreaterThan(3.6);
    expect(e.sigma).toBeLessThan(4.4);
  });

  it('a clean outline gives no evidence, whatever σ̂ it starts from', () => {
    const g = disc();
    for (const start of [2, 10, 40])
      expect(flatEvidence(g.data, g.width, g.height, start, 0, 255).blocks).toBe(0);
    // The same outline with white noise σ 3: the flat parts (clipped at 0 and 255 by half) carry it.
    const noisy = damage(g, { sigma: 3, seed: 5 });
    expect(flatEvidence(noisy, g.width, g.height, 3, 0, 255).blocks).toBeGreaterThanOrEqual(MIN_FLAT_BLOCKS);
  });
});

describe('clean scans stay clean under --noise auto', () => {
  it('horse.png (scikit-image, clean RGBA silhouette): nothing is removed; with white σ 5 added it is cleaned', async () => {
    const input = await fixtureInput('horse.png');
    const prep = prepareClean(input, { noise: 'auto', banding: 'off' });
    // Before the flat-area test σ̂ read 46.7 off the outline's 7 unclipped blocks and 4.7 % of the samples changed.
    expect(prep.method).toBe('off');
    expect(prep.noiseSkipped).toMatch(/not seen in the flat parts/);
    const fin = finishClean(input, prep, null);
    expect(fin.changedSamples).toBe(0);

    const truth: Gray = { width: input.width, height: input.height, data: input.planes[0] };
    const planes = input.planes.map((p, c) => (c < 3 ? damage(truth, { sigma: 5, seed: 11 + c }) : p));
    // Gray content: the three colour channels hold the same image, each with its own noise.
    for (let c = 1; c < 3; c++) expect(input.planes[c].every((v, i) => v === input.planes[0][i])).toBe(true);
    const noisyInput = { ...input, planes };
    const noisyPrep = prepareClean(noisyInput, { noise: 'auto', banding: 'off' });
    expect(noisyPrep.method).toBe('groups');
    const out = finishClean(noisyInput, noisyPrep, denoiseInProcess(noisyPrep, 1).planes).planes[0];
    expect(psnr(out, truth.data) - psnr(planes[0], truth.data)).toBeGreaterThan(2);
  });
});
