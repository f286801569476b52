import { createRequire } from 'node:module';
import { describe, expect, it } from 'vitest';
import { fromRows, jacobiSvd } from '../../src-main/engine/linalg';
import {
  energyRank,
  frobeniusError,
  frobeniusOptimal,
  frobeniusOptimalCurve,
  mse,
  optimalRankPsnr,
  psnr,
  psnrFromFrobenius,
  psnrPlanes,
  rankForPsnr,
  spectralBound,
  ssim,
  ssimPlanes,
} from '../../src-main/engine/metrics';
import { decodeImage } from '../../src-main/node/image/decode';
import { image, reference } from '../helpers/fixtures';
import { lcg } from '../helpers/lcg';

// ssim.js 3.5.0 (npm, obartra/ssim) — an independent JavaScript port of Wang et al.'s MATLAB ssim.m.
const require = createRequire(import.meta.url);
const ssimJs = require('ssim.js') as {
  ssim: (a: unknown, b: unknown, o: Record<string, unknown>) => { mssim: number };
};
const ssimJsVersion: string = require('ssim.js/package.json').version;

// Source: test/fixtures/reference/image_metrics.json — skimage 0.19.3 peak_signal_noise_ratio and
// structural_similarity(gaussian_weights=True, sigma=1.5, use_sample_covariance=False, data_range=L).
const metricsRef = reference('image_metrics.json');
// Source: test/fixtures/reference/rank_approx_images.json — numpy 1.24.2 linalg.svd (LAPACK dgesdd) and
// skimage 0.19.3 peak_signal_noise_ratio on the rank-k reconstructions.
type RankRow = {
  k: number;
  psnr_unrounded_db: number;
  psnr_eckart_young_db: number;
  frobenius_error: number;
  psnr_rounded_clipped_uint8_db: number;
};
type RankImage = {
  file: string;
  shape_rows_cols: [number, number];
  pixel_sum_of_squares: number;
  first_20_singular_values: number[];
  rank_k: RankRow[];
};
const rankRef = reference<{ images: RankImage[] }>('rank_approx_images.json');

type Pair = {
  name: string;
  shape: [number, number];
  data_range: number;
  psnr_db: number;
  mse: number;
  ssim: number;
  reference_pixels_rowmajor: number[];
  test_pixels_rowmajor: number[];
};
const pairs: Pair[] = metricsRef.pairs;

/** Wrap a gray plane as RGBA with R=G=B, so ssim.js's integer rgb2gray ((77R+150G+29B+128)>>8) returns it unchanged. */
function asRgba(plane: ArrayLike<number>, width: number, height: number) {
  const data = new Array<number>(width * height * 4);
  for (let i = 0; i < width * height; i++) {
    data[4 * i] = plane[i];
    data[4 * i + 1] = plane[i];
    data[4 * i + 2] = plane[i];
    data[4 * i + 3] = 255;
  }
  return { width, height, data };
}

/**
 * ssim.js configured to Wang et al. 2004 exactly as skimage is: its defaults differ — `ssim: 'weber'`
 * (a fast variant with a different window/pooling) and `downsample: 'original'` (averages the image down
 * to about 256 px on the short side, as Wang's MATLAB script recommends for viewing distance). Here:
 * `ssim: 'original'` (Gaussian 11×11, σ = 1.5, filter2 'valid' → mean over the fully-inside windows),
 * `downsample: false`, K1 = 0.01, K2 = 0.03, and bitDepth so that L = 2^bitDepth − 1.
 */
function ssimJsMatched(
  a: ArrayLike<number>,
  b: ArrayLike<number>,
  width: number,
  height: number,
  bitDepth: 8 | 16,
) {
  return ssimJs.ssim(asRgba(a, width, height), asRgba(b, width, height), {
    ssim: 'original',
    downsample: false,
    windowSize: 11,
    k1: 0.01,
    k2: 0.03,
    bitDepth,
  }).mssim;
}

/** Direct (non-separable) SSIM written from the JSON's "ssim_algorithm_for_reimplementation" text. */
function ssimDirect(x: ArrayLike<number>, y: ArrayLike<number>, W: number, H: number, L: number) {
  const g: number[] = [];
  for (let i = -5; i <= 5; i++) g.push(Math.exp(-(i * i) / (2 * 1.5 * 1.5)));
  const gs = g.reduce((p, q) => p + q, 0);
  const C1 = (0.01 * L) ** 2;
  const C2 = (0.03 * L) ** 2;
  let total = 0;
  let count = 0;
  for (let r = 5; r <= H - 6; r++)
    for (let c = 5; c <= W - 6; c++) {
      let mx = 0;
      let my = 0;
      let mxx = 0;
      let myy = 0;
      let mxy = 0;
      for (let i = -5; i <= 5; i++)
        for (let j = -5; j <= 5; j++) {
          const w = (g[i + 5] / gs) * (g[j + 5] / gs);
          const p = x[(r + i) * W + c + j];
          const q = y[(r + i) * W + c + j];
          mx += w * p;
          my += w * q;
          mxx += w * p * p;
          myy += w * q * q;
          mxy += w * p * q;
        }
      const vx = mxx - mx * mx;
      const vy = myy - my * my;
      const vxy = mxy - mx * my;
      total += ((2 * mx * my + C1) * (2 * vxy + C2)) / ((mx * mx + my * my + C1) * (vx + vy + C2));
      count++;
    }
  return total / count;
}

describe('PSNR', () => {
  it('textbook value: 8-bit, MSE = 1 → 20·log10(255) = 48.1308036086791 dB (exact arithmetic; image_metrics.json textbook_check)', () => {
    const a = new Float32Array(256).fill(100);
    const b = new Float32Array(256).fill(101);
    expect(mse(a, b)).toBe(1);
    expect(Math.abs(psnr(a, b, 255) - 48.1308036086791)).toBeLessThan(1e-12);
    expect(metricsRef.textbook_check.psnr_db).toBe(48.1308036086791);
  });

  it('is Infinity for identical planes, in 8 and 16 bits', () => {
    const a = new Float32Array([0, 1, 65535, 7]);
    expect(psnr(a, a, 255)).toBe(Number.POSITIVE_INFINITY);
    expect(psnr(a, Float32Array.from(a), 65535)).toBe(Number.POSITIVE_INFINITY);
  });

  for (const p of pairs)
    it(`${p.name}: MSE and PSNR match skimage 0.19.3 (image_metrics.json) to 1e-12`, () => {
      const a = Float32Array.from(p.reference_pixels_rowmajor);
      const b = Float32Array.from(p.test_pixels_rowmajor);
      expect(mse(a, b)).toBeCloseTo(p.mse, 12);
      expect(Math.abs(psnr(a, b, p.data_range) - p.psnr_db)).toBeLessThan(1e-12 * p.psnr_db);
    });

  it('16-bit uses MAX = 65535: ramp16bit pair is 86.328… dB, and 20·log10(65535/255) dB above the 8-bit reading', () => {
    const p = pairs.find((x) => x.name === 'ramp16bit_20x20_vs_offset')!;
    const a = Float32Array.from(p.reference_pixels_rowmajor);
    const b = Float32Array.from(p.test_pixels_rowmajor);
    expect(psnr(a, b, 65535)).toBeCloseTo(86.32838047479466, 11); // skimage 0.19.3, data_range=65535
    expect(psnr(a, b, 65535) - psnr(a, b, 255)).toBeCloseTo(20 * Math.log10(65535 / 255), 11);
  });

  it('pools MSE over channels; Frobenius error is sqrt(SSE)', () => {
    const a = [new Float32Array([0, 0]), new Float32Array([0, 0])];
    const b = [new Float32Array([1, 1]), new Float32Array([3, 3])];
    // MSE = (1+1+9+9)/4 = 5
    expect(psnrPlanes(a, b, 255)).toBeCloseTo(10 * Math.log10(255 ** 2 / 5), 12);
    expect(frobeniusError(a[1], b[1])).toBeCloseTo(Math.sqrt(18), 14);
  });

  it('rejects planes of different length and a non-positive MAX, naming the parameter', () => {
    expect(() => psnr([1, 2], [1], 255)).toThrow(
      /Expected two arrays of equal length \(got 2 and 1\) for planes/,
    );
    expect(() => psnr([1], [1], 0)).toThrow(
      'Expected finite number > 0 for maxValue but received 0 of type number',
    );
  });
});

describe('SSIM (Wang, Bovik, Sheikh & Simoncelli, IEEE TIP 2004; 11×11 Gaussian σ=1.5, K1=0.01, K2=0.03)', () => {
  for (const p of pairs)
    it(`${p.name}: matches skimage 0.19.3 (image_metrics.json) to 1e-9`, () => {
      const [h, w] = p.shape;
      const a = Float32Array.from(p.reference_pixels_rowmajor);
      const b = Float32Array.from(p.test_pixels_rowmajor);
      expect(Math.abs(ssim(a, b, w, h, p.data_range) - p.ssim)).toBeLessThan(1e-9);
    });

  for (const p of pairs)
    it(`${p.name}: matches ssim.js ${ssimJsVersion} ('original', no downsampling) to 1e-10`, () => {
      const [h, w] = p.shape;
      const depth = p.data_range === 65535 ? 16 : 8;
      const ours = ssim(p.reference_pixels_rowmajor, p.test_pixels_rowmajor, w, h, p.data_range);
      expect(
        Math.abs(ours - ssimJsMatched(p.reference_pixels_rowmajor, p.test_pixels_rowmajor, w, h, depth)),
      ).toBeLessThan(1e-10);
    });

  it(`camera.png vs a noisy, non-square crop: matches ssim.js ${ssimJsVersion} and the direct 2-D sum to 1e-10`, async () => {
    const img = await decodeImage(image('camera.png'));
    const W = 97;
    const H = 64; // non-square, so a row/column mix-up would show
    const x = new Float32Array(W * H);
    const y = new Float32Array(W * H);
    const rnd = lcg(11);
    for (let r = 0; r < H; r++)
      for (let c = 0; c < W; c++) {
        const v = img.planes[0][(r + 200) * img.width + c + 150];
        x[r * W + c] = v;
        y[r * W + c] = Math.min(255, Math.max(0, Math.round(v + (rnd() - 0.5) * 40)));
      }
    const ours = ssim(x, y, W, H, 255);
    expect(ours).toBeGreaterThan(0.2);
    expect(ours).toBeLessThan(0.99);
    expect(Math.abs(ours - ssimJsMatched(x, y, W, H, 8))).toBeLessThan(1e-10);
    expect(Math.abs(ours - ssimDirect(x, y, W, H, 255))).toBeLessThan(1e-12);
  });

  it("ssim.js's default settings (weber window + downsampling) give a measurably different value, so the settings matter", async () => {
    const img = await decodeImage(image('camera.png'));
    const noisy = Float32Array.from(img.planes[0], (v, i) =>
      Math.min(255, Math.max(0, v + ((i * 7919) % 31) - 15)),
    );
    const ours = ssim(img.planes[0], noisy, img.width, img.height, 255);
    const dflt = ssimJs.ssim(asRgba(img.planes[0], 512, 512), asRgba(noisy, 512, 512), {}).mssim;
    expect(Math.abs(ours - dflt)).toBeGreaterThan(1e-3);
    expect(Math.abs(ours - ssimJsMatched(img.planes[0], noisy, 512, 512, 8))).toBeLessThan(1e-10);
  });

  it('properties: identical planes give 1, SSIM is symmetric, more noise gives lower SSIM, channels are averaged', () => {
    const W = 40;
    const H = 31;
    const rnd = lcg(3);
    const x = Float32Array.from({ length: W * H }, () => Math.round(rnd() * 255));
    const y1 = Float32Array.from(x, (v) => v + (rnd() - 0.5) * 10);
    const y2 = Float32Array.from(x, (v) => v + (rnd() - 0.5) * 60);
    expect(ssim(x, x, W, H, 255)).toBe(1);
    expect(ssim(x, y1, W, H, 255)).toBeCloseTo(ssim(y1, x, W, H, 255), 14);
    expect(ssim(x, y2, W, H, 255)).toBeLessThan(ssim(x, y1, W, H, 255));
    expect(ssimPlanes([x, x], [y1, y2], W, H, 255)).toBeCloseTo(
      (ssim(x, y1, W, H, 255) + ssim(x, y2, W, H, 255)) / 2,
      14,
    );
  });

  it('refuses images smaller than the 11×11 window, and size mismatches, with a clear message', () => {
    expect(() => ssim(new Float32Array(100), new Float32Array(100), 10, 10, 255)).toThrow(
      'Expected at least 11×11 pixels for the SSIM window for image size but received "10×10" of type string',
    );
    expect(() => ssim(new Float32Array(121), new Float32Array(120), 11, 11, 255)).toThrow(
      /width·height = 121 samples/,
    );
  });
});

describe('Eckart–Young–Mirsky helpers', () => {
  it('spectral bound σ_{k+1} and Frobenius optimum sqrt(Σ_{i>k}σᵢ²) on a small spectrum (hand-computed)', () => {
    const s = [5, 3, 1];
    expect(spectralBound(s, 0)).toBe(5);
    expect(spectralBound(s, 1)).toBe(3);
    expect(spectralBound(s, 3)).toBe(0);
    expect(frobeniusOptimal(s, 1)).toBeCloseTo(Math.sqrt(10), 15);
    expect(frobeniusOptimal(s, 3)).toBe(0);
    expect(Array.from(frobeniusOptimalCurve(s))).toEqual([Math.sqrt(35), Math.sqrt(10), 1, 0]);
    expect(frobeniusOptimal(s.slice(0, 1), 1, 35)).toBeCloseTo(Math.sqrt(10), 14);
  });

  it('energyRank finds the smallest k capturing the fraction of Σσ²', () => {
    expect(energyRank([4, 3], 0.5)).toBe(1);
    expect(energyRank([4, 3], 0.64)).toBe(1); // 16/25 = 0.64 exactly captured
    expect(energyRank([4, 3], 0.65)).toBe(2);
    expect(energyRank([0, 0], 0.9)).toBe(0);
    expect(energyRank([4], 0.9, 25)).toBe(-1); // truncated spectrum that does not reach 90 %
    expect(energyRank([4, 3], 0.9, 25)).toBe(2);
    expect(() => energyRank([1], 0)).toThrow(
      'Expected number in (0, 1] for fraction but received 0 of type number',
    );
  });

  it('summing small-to-large keeps a tiny tail exact where head-subtraction would lose it', () => {
    const s = [1e8, 1e-3, 1e-3];
    expect(frobeniusOptimal(s, 1)).toBeCloseTo(Math.sqrt(2e-6), 18);
  });

  for (const im of rankRef.images)
    it(`${im.file}: optimal rank-k PSNR from the reference σ₁…σ₂₀ and Σx² matches numpy/skimage (rank_approx_images.json) to 1e-6 dB`, () => {
      const [m, n] = im.shape_rows_cols;
      for (const r of im.rank_k.filter((x) => x.k <= 20)) {
        const frob = frobeniusOptimal(im.first_20_singular_values, r.k, im.pixel_sum_of_squares);
        expect(Math.abs(frob - r.frobenius_error) / r.frobenius_error).toBeLessThan(1e-9);
        expect(Math.abs(psnrFromFrobenius(frob, m * n, 255) - r.psnr_eckart_young_db)).toBeLessThan(1e-6);
        expect(Math.abs(psnrFromFrobenius(frob, m * n, 255) - r.psnr_unrounded_db)).toBeLessThan(1e-6);
      }
    });

  it('page.png: full Jacobi spectrum → optimal PSNR at k = 1…100, measured rank-k PSNR (unrounded and rounded+clipped) match the reference', async () => {
    const im = rankRef.images.find((x) => x.file === 'page.png')!;
    const img = await decodeImage(image('page.png'));
    const [m, n] = im.shape_rows_cols;
    expect([img.height, img.width]).toEqual([m, n]);
    const rows = Array.from({ length: m }, (_, i) => Array.from(img.planes[0].subarray(i * n, (i + 1) * n)));
    const { s, U, V } = jacobiSvd(fromRows(rows));
    const r = s.length;
    for (const ref of im.rank_k) {
      expect(Math.abs(optimalRankPsnr(s, ref.k, m * n, 255) - ref.psnr_eckart_young_db)).toBeLessThan(1e-6);
      // Rebuild A_k = U_k S_k V_kᵀ and measure.
      const ak = new Float64Array(m * n);
      for (let i = 0; i < m; i++)
        for (let t = 0; t < ref.k; t++) {
          const u = U.data[i * r + t] * s[t];
          for (let j = 0; j < n; j++) ak[i * n + j] += u * V.data[j * r + t];
        }
      expect(Math.abs(psnr(img.planes[0], ak, 255) - ref.psnr_unrounded_db)).toBeLessThan(1e-6);
      const rounded = Float32Array.from(ak, (v) => Math.min(255, Math.max(0, Math.round(v))));
      expect(Math.abs(psnr(img.planes[0], rounded, 255) - ref.psnr_rounded_clipped_uint8_db)).toBeLessThan(
        1e-6,
      );
    }
    // rankForPsnr inverts optimalRankPsnr.
    const k = rankForPsnr(s, 30, m * n, 255);
    expect(optimalRankPsnr(s, k, m * n, 255)).toBeGreaterThanOrEqual(30);
    expect(optimalRankPsnr(s, k - 1, m * n, 255)).toBeLessThan(30);
  });

  it('psnrFromFrobenius: MSE = ‖E‖²/N, so ‖E‖ = 16 over 256 pixels is the 48.1308 dB textbook value; 0 error → Infinity', () => {
    expect(psnrFromFrobenius(16, 256, 255)).toBeCloseTo(48.1308036086791, 12);
    expect(psnrFromFrobenius(0, 256, 255)).toBe(Number.POSITIVE_INFINITY);
    expect(psnrFromFrobenius(256, 65536, 65535)).toBeCloseTo(20 * Math.log10(65535), 12);
  });
});
