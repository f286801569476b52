// A correlated-noise verdict must be seen in the flat blocks it was read from (src-main/engine/clean/
// noise-psd-floor.ts): noise holds every flat block up to its level, smooth content does not.
import { describe, expect, it } from 'vitest';
import { denoiseInProcess, finishClean, prepareClean } from '../../src-main/engine/clean';
import { estimateNoisePsd } from '../../src-main/engine/clean/noise-psd';
import { blockDegrees, floorTest } from '../../src-main/engine/clean/noise-psd-floor';
import { analyticPsd, BINOMIAL_3, filteredNoise } from './correlated-noise';
import { fixtureInput, psnr } from './helpers';

describe('blockDegrees', () => {
  it('white noise: a 16×16 block less its fitted plane has 256 − 3 = 253 degrees of freedom', () => {
    const side = 15;
    const white = new Float64Array(side * side);
    white[7 * side + 7] = 1;
    expect(blockDegrees(white, 7)).toBeCloseTo(253, 9);
  });

  it('filtered noise has fewer: its neighbours share their samples', () => {
    const k = blockDegrees(analyticPsd(BINOMIAL_3, 7).autocov, 7);
    // 256 over Σρ² = 1/0.26 (the binomial's flatness, noise-psd.ts) is 67 before the block's edges and plane.
    expect(k).toBeGreaterThan(50);
    expect(k).toBeLessThan(100);
  });
});

describe('floorTest', () => {
  it('filtered noise on a flat field passes; the same blocks with a quiet tenth are content', () => {
    const W = 256;
    const n = filteredNoise(W, W, BINOMIAL_3, 6, 9);
    const plane = Float32Array.from(n, (v) => 128 + v);
    const psd = estimateNoisePsd(plane, W, W, 0, 255);
    expect(psd?.correlated).toBe(true);
    const vars = psd?.blockVariances as Float64Array;
    expect(vars.length).toBeGreaterThan(200);
    const noise = floorTest(vars, psd!.autocov, psd!.lag);
    expect(noise.content).toBe(false);
    // Content holds no block up: a tenth of the blocks at 40 % of the typical level cannot be noise.
    const quiet = vars.map((v, i) => (i % 10 === 0 ? 0.4 * v : v));
    const content = floorTest(quiet, psd!.autocov, psd!.lag);
    expect(content.below).toBeGreaterThanOrEqual(Math.floor(vars.length / 10));
    expect(content.content).toBe(true);
  });
});

describe('clean scans do not read as correlated noise under --noise auto', () => {
  it('coins.png (scikit-image, clean, 8×8 blocking in its flat parts): untouched; with binomial noise σ 10 it is cleaned', async () => {
    const input = await fixtureInput('coins.png');
    const prep = prepareClean(input, { noise: 'auto', banding: 'off' });
    // Before the floor test it read as correlated noise of σ 2.49 (flatness 0.14) and 42 % of the samples changed.
    expect(prep.noiseColour?.reason).toMatch(/quieter than noise/);
    expect(prep.method).toBe('off');
    expect(finishClean(input, prep, null).changedSamples).toBe(0);

    const n = filteredNoise(input.width, input.height, BINOMIAL_3, 10, 17);
    const noisy = input.planes[0].map((v, i) => Math.min(255, Math.max(0, Math.round(v + n[i]))));
    const noisyInput = { ...input, planes: [noisy] };
    const noisyPrep = prepareClean(noisyInput, { noise: 'auto', banding: 'off' });
    expect(noisyPrep.noiseColour?.colour).toBe('correlated');
    expect(noisyPrep.method).toBe('groups');
    const out = finishClean(noisyInput, noisyPrep, denoiseInProcess(noisyPrep, 1).planes).planes[0];
    expect(psnr(out, input.planes[0]) - psnr(noisy, input.planes[0])).toBeGreaterThan(3);
  }, 120_000);
});
