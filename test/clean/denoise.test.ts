// Local low-rank denoising (block-matched patch groups, Gavish–Donoho threshold per group) on crops of the
// fixture images with synthetic Gaussian noise. Quantitative margins use only images the constants were
// not fitted on (stated beside each); the references for the method are in
// src-main/engine/clean/patch-groups.ts (Dong, Shi & Li 2013; Gu et al. 2014).
import { describe, expect, it } from 'vitest';
import {
  autoGroupParams,
  denoiseBand,
  denoiseGroupsBand,
  denoiseInProcess,
  denoiseTiles,
  estimateNoiseSigma,
  type GroupParams,
  prepareClean,
} from '../../src-main/engine/clean';
import { decodeImage } from '../../src-main/node/image/decode';
import { image } from '../helpers/fixtures';
import { damage, fixtureGray, type Gray, psnr, rounded } from './helpers';

/** A held-out fixture as an 8-bit gray plane: phantom.png's first channel, or the 16-bit chessboard ÷257. */
async function heldOutGray(name: string): Promise<Gray> {
  if (name === 'phantom.png') return fixtureGray(name);
  const d = await decodeImage(image(name));
  return {
    width: d.width,
    height: d.height,
    data: Float32Array.from(d.planes[0], (v) => Math.round(v / 257)),
  };
}

const crop = { x: 128, y: 128, w: 192, h: 192 };

describe('patch-group denoiser', () => {
  // The automatic settings (autoGroupParams, the Lanczos stop rule, the noise estimate) were fitted on the
  // images bench/clean.bench.ts runs: camera, moon, page and text from test/fixtures/images and every
  // sample in samples/. A margin measured on those images would be optimistic, so they are held to the
  // property alone: psnr(cleaned, truth) > psnr(noisy, truth).
  const tuned: Array<[string, typeof crop | undefined, number]> = [
    ['camera.png', crop, 10],
    ['moon.png', crop, 10],
    ['text.png', undefined, 10],
    ['page.png', undefined, 10],
    ['camera.png', crop, 5],
    ['moon.png', crop, 20],
  ];
  // Margins from images the constants were NOT fitted on (phantom.png, channel 0; chessboard_GRAY_U16.tif
  // scaled to 8 bits by ÷257): gains measured with seeds 7, 8 and 9 before this test was written were
  // phantom 7.45–7.51 (σ = 5), 7.65–7.74 (σ = 10), 7.62–7.65 (σ = 20) dB and chessboard 6.22–6.31 (σ = 5),
  // 5.80–6.21 (σ = 10), 5.77–6.01 (σ = 20) dB. Each margin is about 1 dB below the smallest of the three,
  // so a regression of about 1 dB on unseen images fails. With the Wiener second pass and the wider search
  // (wiener-groups.ts) the same runs gave phantom 7.31–7.32, 8.08–8.10, 8.08–8.11 dB and chessboard
  // 6.24–6.37, 5.95–6.36, 5.91–6.19 dB (phantom σ = 5 is the one case below the one-pass figures).
  const heldOut: Array<[string, number, number]> = [
    ['phantom.png', 5, 6.5],
    ['phantom.png', 10, 6.5],
    ['phantom.png', 20, 6.5],
    ['chessboard_GRAY_U16.tif', 5, 5.2],
    ['chessboard_GRAY_U16.tif', 10, 4.8],
    ['chessboard_GRAY_U16.tif', 20, 4.8],
  ];
  const gainOf = (truth: Gray, sigma: number) => {
    const noisy = damage(truth, { sigma, seed: 7 });
    const prep = prepareClean(
      { width: truth.width, height: truth.height, channels: 1, bitDepth: 8, planes: [noisy] },
      { noise: 'auto', banding: 'off' },
    );
    const { planes } = denoiseInProcess(prep);
    return psnr(rounded(planes[0]), truth.data) - psnr(noisy, truth.data);
  };
  for (const [name, c, sigma] of tuned)
    it(`${name}${c ? ' crop' : ''}, σ = ${sigma} (a tuning image): psnr(cleaned, truth) > psnr(noisy, truth)`, async () => {
      expect(gainOf(await fixtureGray(name, c), sigma)).toBeGreaterThan(0);
    });
  for (const [name, sigma, margin] of heldOut)
    it(`${name}, σ = ${sigma} (held out): psnr(cleaned, truth) > psnr(noisy, truth) + ${margin} dB`, async () => {
      expect(gainOf(await heldOutGray(name), sigma)).toBeGreaterThan(margin);
    });

  for (const [label, run] of [
    ['low-rank pass', denoiseGroupsBand],
    [
      'both passes (low-rank, then Wiener)',
      (
        planes: Float32Array[],
        width: number,
        height: number,
        sigmas: number[],
        params: GroupParams,
        r0: number,
        r1: number,
      ) => denoiseBand({ planes, width, height, sigmas, params, rowStart: r0, rowEnd: r1 }),
    ],
  ] as const)
    it(`${label}: the band split does not change a single bit (1, 2 and 3 bands; split independence)`, async () => {
      const truth = await fixtureGray('camera.png', { x: 100, y: 100, w: 96, h: 120 });
      const noisy = damage(truth, { sigma: 10, seed: 9 });
      const params = autoGroupParams(10);
      const whole = run([noisy], truth.width, truth.height, [10], params, 0, truth.height).planes[0];
      for (const cuts of [
        [0, 60, 120],
        [0, 17, 71, 120],
      ]) {
        const joined = new Float32Array(whole.length);
        for (let b = 0; b + 1 < cuts.length; b++) {
          const part = run([noisy], truth.width, truth.height, [10], params, cuts[b], cuts[b + 1]).planes[0];
          joined.set(part, cuts[b] * truth.width);
        }
        expect(Buffer.from(joined.buffer).equals(Buffer.from(whole.buffer))).toBe(true);
      }
    });

  // Held out (phantom.png was not used to choose the second pass): with seeds 7, 8 and 9 the second pass
  // added 0.46–0.47 dB at σ = 10 and 20 (measured before this test was written); the margin is 0.3 dB.
  for (const sigma of [10, 20])
    it(`phantom.png, σ = ${sigma}: the Wiener second pass gains over the low-rank pass alone by > 0.3 dB`, async () => {
      const truth = await heldOutGray('phantom.png');
      const noisy = damage(truth, { sigma, seed: 7 });
      const prep = prepareClean(
        { width: truth.width, height: truth.height, channels: 1, bitDepth: 8, planes: [noisy] },
        { noise: 'auto', banding: 'off' },
      );
      const two = denoiseInProcess(prep).planes[0];
      const one = denoiseInProcess({ ...prep, params: { ...prep.params!, wiener: undefined } }).planes[0];
      expect(prep.params?.wiener).toBeDefined();
      expect(psnr(rounded(two), truth.data) - psnr(rounded(one), truth.data)).toBeGreaterThan(0.3);
    });

  it('rank 0 for every group gives each group its mean patch (a smoother image, never the noisy one)', async () => {
    const truth = await fixtureGray('moon.png', crop);
    const noisy = damage(truth, { sigma: 10, seed: 5 });
    const params = { ...autoGroupParams(10), rank: 0 };
    const { planes, stats } = denoiseGroupsBand(
      [noisy],
      truth.width,
      truth.height,
      [10],
      params,
      0,
      truth.height,
    );
    expect(stats.rankMax).toBe(0);
    expect(psnr(planes[0], truth.data)).toBeGreaterThan(psnr(noisy, truth.data));
  });

  it('a threshold of 0 keeps every component, so the output equals the input to float rounding', async () => {
    const truth = await fixtureGray('moon.png', { x: 0, y: 0, w: 64, h: 64 });
    const noisy = damage(truth, { sigma: 10, seed: 5 });
    const params = { ...autoGroupParams(10), threshold: 0 };
    const { planes } = denoiseGroupsBand([noisy], truth.width, truth.height, [10], params, 0, truth.height);
    let max = 0;
    for (let i = 0; i < noisy.length; i++) max = Math.max(max, Math.abs(planes[0][i] - noisy[i]));
    expect(max).toBeLessThan(1e-3);
  });

  it('tiles fallback (Hann-blended 16 px tiles) also improves PSNR, by less than the groups', async () => {
    const truth = await fixtureGray('moon.png', crop);
    const noisy = damage(truth, { sigma: 10, seed: 7 });
    const sigma = estimateNoiseSigma(noisy, truth.width, truth.height, 0, 255);
    const tiles = denoiseTiles(noisy, truth.width, truth.height, sigma, 16).plane;
    const groups = denoiseGroupsBand(
      [noisy],
      truth.width,
      truth.height,
      [sigma],
      autoGroupParams(sigma),
      0,
      truth.height,
    ).planes[0];
    const base = psnr(noisy, truth.data);
    // moon.png is a tuning image: the property only (no measured margin).
    expect(psnr(rounded(tiles), truth.data)).toBeGreaterThan(base);
    expect(psnr(rounded(groups), truth.data)).toBeGreaterThan(psnr(rounded(tiles), truth.data));
  });

  it('16-bit: the same image on the 0–65535 scale gains the same as on 0–255 (within 0.3 dB)', async () => {
    const truth = await fixtureGray('moon.png', crop);
    const noisy8 = damage(truth, { sigma: 10, seed: 7 });
    const scale = 257;
    const truth16 = truth.data.map((v) => v * scale);
    const noisy16 = noisy8.map((v) => v * scale);
    const run = (planes: Float32Array[], bitDepth: 8 | 16) => {
      const prep = prepareClean(
        { width: truth.width, height: truth.height, channels: 1, bitDepth, planes },
        { noise: 'auto', banding: 'off' },
      );
      return denoiseInProcess(prep).planes[0];
    };
    const g8 = psnr(rounded(run([noisy8], 8)), truth.data) - psnr(noisy8, truth.data);
    const g16 = psnr(rounded(run([noisy16], 16), 65535), truth16, 65535) - psnr(noisy16, truth16, 65535);
    expect(Math.abs(g16 - g8)).toBeLessThan(0.3);
  });

  it('colour: phantom.png (centre crop) with σ = 10 per channel gains > 3 dB through luma/chroma denoising', async () => {
    const { decodeImage } = await import('../../src-main/node/image/decode');
    const { image } = await import('../helpers/fixtures');
    const full = await decodeImage(image('phantom.png'));
    // 200×200 crop of the centre, to keep the test short.
    const W = 200;
    const d = {
      width: W,
      height: W,
      planes: full.planes
        .slice(0, 3)
        .map((p) =>
          Float32Array.from(
            { length: W * W },
            (_, i) => p[(100 + Math.floor(i / W)) * full.width + 100 + (i % W)],
          ),
        ),
    };
    const planes = d.planes.map((p, c) =>
      damage({ width: d.width, height: d.height, data: p }, { sigma: 10, seed: 20 + c }),
    );
    const prep = prepareClean(
      { width: d.width, height: d.height, channels: 3, bitDepth: 8, planes },
      { noise: 'auto', banding: 'off' },
    );
    expect(prep.workNames).toEqual(['Y', 'Cb', 'Cr']);
    const { finishClean } = await import('../../src-main/engine/clean');
    const fin = finishClean(
      { width: d.width, height: d.height, channels: 3, bitDepth: 8, planes },
      prep,
      denoiseInProcess(prep).planes,
    );
    const before = psnr(
      Float32Array.from(planes.flatMap((p) => Array.from(p))),
      Float32Array.from(d.planes.slice(0, 3).flatMap((p) => Array.from(p))),
    );
    const after = psnr(
      Float32Array.from(fin.planes.flatMap((p) => Array.from(p))),
      Float32Array.from(d.planes.slice(0, 3).flatMap((p) => Array.from(p))),
    );
    // phantom.png is not among the images the constants were fitted on (see the top of this file); the
    // gray channel alone (whole image) gains 7.65–7.74 dB at σ = 10, so 3 dB leaves room for the chroma planes.
    expect(after - before).toBeGreaterThan(3);
  });
});

describe('gray scans stored as RGB', () => {
  it('noise on equal R = G = B leaves chroma noiseless: only luma is denoised, chroma passes through', async () => {
    const truth = await fixtureGray('moon.png', crop);
    const noisy = damage(truth, { sigma: 10, seed: 7 });
    const planes = [noisy, Float32Array.from(noisy), Float32Array.from(noisy)];
    const prep = prepareClean(
      { width: truth.width, height: truth.height, channels: 3, bitDepth: 8, planes },
      { noise: 'auto', banding: 'off' },
    );
    expect(prep.active).toEqual([0]);
    const out = denoiseInProcess(prep).planes;
    expect(out[1]).toBe(prep.work[1]);
    // Luma of R = G = B is the gray plane itself, so it gains what the gray path gains (no margin measured
    // on this tuning image: the gray run is the reference).
    const gray = denoiseInProcess(
      prepareClean(
        { width: truth.width, height: truth.height, channels: 1, bitDepth: 8, planes: [noisy] },
        { noise: 'auto', banding: 'off' },
      ),
    ).planes[0];
    const before = psnr(noisy, truth.data);
    expect(psnr(rounded(out[0]), truth.data)).toBeGreaterThan(before);
    expect(Math.abs(psnr(rounded(out[0]), truth.data) - psnr(rounded(gray), truth.data))).toBeLessThan(0.01);
  });
});
