// The coarse-scale pass for correlated noise (engine/clean/pyramid.ts): REDUCE and EXPAND with Burt & Adelson's
// 5-tap kernel (IEEE Trans. Commun. 31(4):532–540, 1983, a = 0.375: [1 4 6 4 1]/16), the noise model predicted
// one level down, and what the pass does to the low band of the error. Reference values are analytic: a
// symmetric kernel summing to 1 keeps constants and ramps; the autocorrelation of [1 4 6 4 1]/16 is
// [1 8 28 56 70 56 28 8 1]/256.
import { describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { estimateNoisePsd, type NoisePsd, psdFromAutocov } from '../../src-main/engine/clean/noise-psd';
import { expand, reduce, reducedPsd } from '../../src-main/engine/clean/pyramid';
import { psnrPlanes } from '../../src-main/engine/metrics/psnr';
import { decodeImage } from '../../src-main/node/image/decode';
import { cleanDecoded } from '../../src-main/node/services/clean';
import { image } from '../helpers/fixtures';
import { BINOMIAL_3, filteredNoise, GAUSSIAN_5 } from './correlated-noise';
import { fixtureGray, gaussian, greyDecoded, rng } from './helpers';

/** White noise of variance v as a NoisePsd on lags up to 7. */
function whitePsd(v: number): NoisePsd {
  const a = new Float64Array(15 * 15);
  a[7 * 15 + 7] = v;
  return psdFromAutocov(a, 7, 0);
}

describe('Gaussian pyramid REDUCE / EXPAND', () => {
  it('sizes are ⌈w/2⌉ × ⌈h/2⌉, and a plane a + b·x + c·y comes back exactly away from the edges', () => {
    const w = 41;
    const h = 30;
    const ramp = new Float32Array(w * h);
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) ramp[y * w + x] = 20 + 0.5 * x - 0.25 * y;
    const r = reduce(ramp, w, h);
    expect([r.width, r.height]).toEqual([21, 15]);
    // Interior of the coarse level: the ramp sampled at (2y, 2x).
    expect(r.plane[5 * 21 + 7]).toBeCloseTo(20 + 0.5 * 14 - 0.25 * 10, 4);
    const back = expand(r.plane, w, h);
    let worst = 0;
    for (let y = 4; y < h - 4; y++)
      for (let x = 4; x < w - 4; x++) worst = Math.max(worst, Math.abs(back[y * w + x] - ramp[y * w + x]));
    expect(worst).toBeLessThan(1e-4);
  });

  it('a constant stays that constant everywhere, edges included (mirrored edges)', () => {
    for (const [w, h] of [
      [16, 16],
      [17, 9],
    ]) {
      const c = new Float32Array(w * h).fill(37);
      const r = reduce(c, w, h);
      expect(r.plane.every((v) => Math.abs(v - 37) < 1e-4)).toBe(true);
      expect(expand(r.plane, w, h).every((v) => Math.abs(v - 37) < 1e-4)).toBe(true);
    }
  });
});

describe('the noise model one level down', () => {
  it('white noise: σ shrinks by 70/256 and the neighbour correlation is 28/70 (kernel autocorrelation)', () => {
    const c = reducedPsd(whitePsd(4));
    expect(c.sigma).toBeCloseTo((2 * 70) / 256, 10);
    expect(c.lagOne).toBeCloseTo(28 / 70, 10);
  });

  for (const [name, g] of [
    ['white', null],
    ['3×3 binomial', BINOMIAL_3],
    ['5×5 Gaussian σ_k = 1', GAUSSIAN_5],
  ] as Array<[string, number[] | null]>)
    it(`${name} noise: the prediction from the full-size measurement matches a measurement on the reduced plane`, () => {
      const side = 512;
      const next = gaussian(rng(31));
      const n = g
        ? filteredNoise(side, side, g, 10, 32)
        : Float64Array.from({ length: side * side }, () => 10 * next());
      const plane = Float32Array.from(n, (v) => 128 + v);
      const full = estimateNoisePsd(plane, side, side) as NoisePsd;
      const small = reduce(plane, side, side);
      const measured = estimateNoisePsd(small.plane, small.width, small.height) as NoisePsd;
      const predicted = reducedPsd(full);
      expect(Math.abs(predicted.sigma / measured.sigma - 1)).toBeLessThan(0.05);
      expect(Math.abs(predicted.lagOne - measured.lagOne)).toBeLessThan(0.05);
    });
});

describe('clean --noise auto: the coarse pass removes low-frequency noise', () => {
  it('moon.png crop, Gaussian-filtered noise σ 10: the error left two levels down is a small share of the noise there', async () => {
    const t = await fixtureGray('moon.png', { x: 96, y: 96, w: 256, h: 256 });
    const n = filteredNoise(t.width, t.height, GAUSSIAN_5, 10, 23);
    const noisy = t.data.map((v, i) => Math.min(255, Math.max(0, Math.round(v + n[i]))));
    const r = await cleanDecoded(greyDecoded(t, [noisy], 'moon-correlated.png'), {
      noise: 'auto',
      banding: 'off',
      workers: 0,
    });
    expect(r.report.noiseColour?.colour).toBe('correlated');
    // Power of (a − truth) two REDUCE levels down (frequencies below about π/4 of the full size).
    const lowPower = (a: Float32Array) => {
      const e = a.map((v, i) => v - t.data[i]);
      const r1 = reduce(e, t.width, t.height);
      const r2 = reduce(r1.plane, r1.width, r1.height);
      return r2.plane.reduce((s, v) => s + v * v, 0) / r2.plane.length;
    };
    // Measured here: 0.70 of the noise's power there without the coarse pass (the patch passes alone), 0.38 with it.
    expect(lowPower(r.planes[0])).toBeLessThan(0.5 * lowPower(noisy));
  }, 60_000);
});

describe('the coarse pass on colour and 16-bit scans', () => {
  const run = async (
    truth: Float32Array[],
    noisy: Float32Array[],
    w: number,
    h: number,
    bitDepth: 8 | 16,
  ) => {
    const max = bitDepth === 16 ? 65535 : 255;
    const d: DecodedImage = {
      file: 'correlated-pass.png',
      width: w,
      height: h,
      channels: noisy.length as 1 | 3,
      bitDepth,
      colour: noisy.length === 3 ? 'rgb' : 'gray',
      hasAlpha: false,
      planes: noisy,
      meta: { format: 'png' },
      inputBytes: 0,
      rawBytes: w * h * noisy.length,
      sourceSha256: '',
    };
    const gain = async (noiseColour: 'auto' | 'white') => {
      const r = await cleanDecoded(d, { noise: 'auto', banding: 'off', workers: 0, noiseColour });
      return {
        gain: psnrPlanes(r.planes, truth, max) - psnrPlanes(noisy, truth, max),
        colour: r.report.noiseColour?.colour,
      };
    };
    return { auto: await gain('auto'), white: await gain('white') };
  };

  it('RGB (phantom.png crop, binomial-filtered noise σ 10 per channel): correlated, and well above the white path', async () => {
    const d = await decodeImage(image('phantom.png'));
    const w = 192;
    const h = 192;
    const truth = [0, 1, 2].map((c) =>
      Float32Array.from(
        { length: w * h },
        (_, i) => d.planes[c][(100 + Math.floor(i / w)) * d.width + 100 + (i % w)],
      ),
    );
    const noisy = truth.map((p, c) => {
      const n = filteredNoise(w, h, BINOMIAL_3, 10, 40 + c);
      return p.map((v, i) => Math.min(255, Math.max(0, Math.round(v + n[i]))));
    });
    const r = await run(truth, noisy, w, h, 8);
    expect(r.auto.colour).toBe('correlated');
    expect(r.auto.gain).toBeGreaterThan(r.white.gain + 1.5);
  }, 120_000);

  it('16-bit (moon.png crop × 257, Gaussian-filtered noise σ 2570): correlated, and well above the white path', async () => {
    const t = await fixtureGray('moon.png', { x: 96, y: 96, w: 192, h: 192 });
    const truth = [t.data.map((v) => v * 257)];
    const n = filteredNoise(t.width, t.height, GAUSSIAN_5, 2570, 41);
    const noisy = [truth[0].map((v, i) => Math.min(65535, Math.max(0, Math.round(v + n[i]))))];
    const r = await run(truth, noisy, t.width, t.height, 16);
    expect(r.auto.colour).toBe('correlated');
    expect(r.auto.gain).toBeGreaterThan(r.white.gain + 1.5);
  }, 120_000);
});
