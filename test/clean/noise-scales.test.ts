// White noise under texture must not be read as correlated noise (src-main/engine/clean/noise-psd-plan.ts,
// "White noise under texture"): the robust σ̂ one Haar scale coarser (noise-estimate.ts coarseNoiseSigma)
// equals the finest-scale σ̂ for white noise and is several times it for low-pass filtered noise; the spectrum's
// texture bound is checked at that scale too (noise-psd-spectrum.ts haarCoarseVariance).
import { describe, expect, it } from 'vitest';
import { coarseNoiseSigma, estimateNoiseSigma } from '../../src-main/engine/clean/noise-estimate';
import { textureFree } from '../../src-main/engine/clean/noise-psd-plan';
import { haarCoarseVariance, haarDiagonalVariance } from '../../src-main/engine/clean/noise-psd-spectrum';
import { decodeImage } from '../../src-main/node/image/decode';
import { cleanDecoded } from '../../src-main/node/services/clean';
import { fixture } from '../helpers/fixtures';
import { analyticPsd, BINOMIAL_3, filteredNoise, GAUSSIAN_5 } from './correlated-noise';
import { gaussian, psnr, rng } from './helpers';

describe('the Haar diagonal detail one scale coarser', () => {
  // Exact quadratic forms of the unit-variance filtered noises: sum of squares of the 4×4 detail filter (±1/4)
  // convolved with the normalised kernel (numpy 1.24.2 / scipy 1.10.1 signal.convolve2d): binomial 49/36 =
  // 1.36111, Gaussian σ_k 1 on 5 taps 0.96420; the finest-scale detail of the binomial noise is 1/9.
  it('haarCoarseVariance matches the exact values of the filtered noises', () => {
    expect(haarCoarseVariance(analyticPsd(BINOMIAL_3, 7))).toBeCloseTo(49 / 36, 6);
    expect(haarCoarseVariance(analyticPsd(GAUSSIAN_5, 7))).toBeCloseTo(0.9642, 4);
    expect(haarDiagonalVariance(analyticPsd(BINOMIAL_3, 7))).toBeCloseTo(1 / 9, 6);
  });

  it('coarseNoiseSigma reads σ for white noise and 3.5× the finest σ̂ for binomial-filtered noise', () => {
    const side = 512;
    const g = gaussian(rng(11));
    const white = Float32Array.from({ length: side * side }, () => Math.round(128 + 10 * g()));
    // 65 536 coarse blocks, half of them kept: the median-based σ̂ is within about 1 %; rounding adds 1/12.
    expect(coarseNoiseSigma(white, side, side, 0, 255)).toBeGreaterThan(9.7);
    expect(coarseNoiseSigma(white, side, side, 0, 255)).toBeLessThan(10.3);
    const n = filteredNoise(side, side, BINOMIAL_3, 10, 12);
    const corr = Float32Array.from(n, (v) => Math.round(128 + v));
    // Exact: √(1.36111 / 0.11111) = 3.5 (above); rounding's white 1/12 lowers it a little.
    const ratio = coarseNoiseSigma(corr, side, side, 0, 255) / estimateNoiseSigma(corr, side, side, 0, 255);
    expect(ratio).toBeGreaterThan(3.2);
    expect(ratio).toBeLessThan(3.7);
  });

  it('a sample at a clip level takes its coarse blocks out', () => {
    const side = 64;
    const g = gaussian(rng(3));
    const p = Float32Array.from({ length: side * side }, () => Math.round(128 + 10 * g()));
    const before = coarseNoiseSigma(p, side, side, 0, 255);
    // Saturate every sample of the left half: the coarse blocks there are skipped, not read as noise-free.
    for (let y = 0; y < side; y++) for (let x = 0; x < side / 2; x++) p[y * side + x] = 255;
    const after = coarseNoiseSigma(p, side, side, 0, 255);
    expect(after).toBeGreaterThan(0.8 * before);
  });
});

describe('white noise on stained tissue (colour): cleaned as white noise', () => {
  // test/fixtures/texture/ihc-crop.png (SOURCES.md there): every flat block holds tissue, so the spectrum of
  // the luma's flat blocks is not flat (flatness 0.07, high-frequency share 0.15) although the noise is white.
  it('ihc crop, white σ 10 per channel: white verdict, σ̂ near 10, a gain above the outside reference', async () => {
    const d = await decodeImage(fixture('texture', 'ihc-crop.png'));
    const g = gaussian(rng(16));
    const noisy = d.planes.map((p) =>
      Float32Array.from(p, (v) => Math.min(255, Math.max(0, Math.round(v + 10 * g())))),
    );
    const out = await cleanDecoded({ ...d, planes: noisy }, { noise: 'auto', banding: 'off', workers: 0 });
    expect(out.report.noiseColour?.colour).toBe('white');
    expect(out.report.noiseColour?.reason).toMatch(/one wavelet scale coarser \(white noise: 1\)/);
    // Before the scale test: correlated, σ̂ 24.8 and a loss.
    expect(out.report.noiseSigma).toBeGreaterThan(9);
    expect(out.report.noiseSigma).toBeLessThan(11.5);
    const truth = d.planes.flatMap((p) => Array.from(p));
    const gain =
      psnr(
        out.planes.flatMap((p) => Array.from(p)),
        truth,
      ) -
      psnr(
        noisy.flatMap((p) => Array.from(p)),
        truth,
      );
    // scikit-image 0.19.3 told σ 10 on this exact input (texture/SOURCES.md): NL-means +4.092 dB, the best of three
    // (wavelet +2.809, TV +0.601).
    expect(gain).toBeGreaterThan(4.092);
  }, 60_000);
});

describe('white noise under texture whose share grows with scale (textureFree)', () => {
  it('recovers n from n + t·gʲ exactly, and keeps v₁ where the texture does not grow faster', () => {
    // n = 25, t = 10, g = 4: 35, 65, 185 → 35 − 30²/(120 − 30) = 25.
    expect(textureFree([35, 65, 185])).toBeCloseTo(25, 12);
    // White noise alone (no growth) and growth that slows down: the model says nothing, v₁ stands.
    expect(textureFree([100, 100, 100])).toBe(100);
    expect(textureFree([100, 140, 160])).toBe(100);
    // Texture alone (n = 0) and growth that would put n below 0: clamped to 0.
    expect(textureFree([10, 40, 160])).toBeCloseTo(0, 12);
    expect(textureFree([10, 50, 100])).toBe(0);
  });

  it('grass crop with no noise added: read as texture and left untouched', async () => {
    // test/fixtures/texture/grass-crop.png (SOURCES.md there). Before: the flat-block spectrum was read as
    // texture and the scan cleaned as white noise of σ̂ 9.16 (the fine-scale detail of the grass itself).
    const d = await decodeImage(fixture('texture', 'grass-crop.png'));
    const out = await cleanDecoded(d, { noise: 'auto', banding: 'off', workers: 0 });
    expect(out.report.noiseColour?.reason).toMatch(
      /^the flat blocks hold texture.*without the texture's share/,
    );
    expect(out.report.noiseSigma).toBeLessThan(1);
    expect(out.report.noiseSkipped).toMatch(/nothing to remove/);
    expect(Buffer.from(out.planes[0].buffer).equals(Buffer.from(Float32Array.from(d.planes[0]).buffer))).toBe(
      true,
    );
  }, 60_000);
});
