/**
 * The patch-group denoiser's WebAssembly kernels (src-main/engine/clean/wasm/assembly/groups.ts) must give
 * the TypeScript path's output bit for bit: same groups in the same order from block matching (ties
 * included), same Wiener estimates, so the same Float32 planes. Each case runs both paths on the same input
 * and compares the bytes; no timing is measured here.
 */
import { afterEach, describe, expect, it } from 'vitest';
import { forEachGroup } from '../../src-main/engine/clean/block-matching';
import { PSD_LAG } from '../../src-main/engine/clean/noise-psd';
import { patchCrossCovariance } from '../../src-main/engine/clean/noise-psd-cross';
import { dctNoiseVariances } from '../../src-main/engine/clean/noise-psd-spectrum';
import { autoGroupParams, denoiseBand, type GroupParams } from '../../src-main/engine/clean/patch-groups';
import { groupKernels, setGroupKernelsDisabled } from '../../src-main/engine/clean/wasm/runtime';
import { lcg } from '../helpers/lcg';
import { analyticPsd, BINOMIAL_3 } from './correlated-noise';
import { fixtureGray, gaussian } from './helpers';

afterEach(() => setGroupKernelsDisabled(false));

/** Run `f` with the kernels (true) or the TypeScript path (false). */
function withKernels<T>(on: boolean, f: () => T): T {
  setGroupKernelsDisabled(!on);
  try {
    return f();
  } finally {
    setGroupKernelsDisabled(false);
  }
}

const bytes = (a: Float32Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength);

/** Noisy copy of `data`, not rounded (fractional guide values), seeded. */
function noisy(data: Float32Array, sigma: number, seed: number): Float32Array {
  const g = gaussian(lcg(seed));
  return data.map((v) => v + sigma * g());
}

function denoise(planes: Float32Array[], width: number, height: number, sigma: number, params: GroupParams) {
  return denoiseBand({
    planes,
    width,
    height,
    sigmas: planes.map(() => sigma),
    params,
    rowStart: 0,
    rowEnd: height,
  });
}

describe('patch-group kernels give the TypeScript output bit for bit', () => {
  it('the kernels load on this Node (WebAssembly SIMD), so the comparisons below exercise them', () => {
    expect(groupKernels()).not.toBeNull();
  });

  for (const sigma of [5, 10, 30]) {
    it(`camera.png 96×80 crop, Gaussian σ = ${sigma}, both passes (patch ${autoGroupParams(sigma).patch})`, async () => {
      const g = await fixtureGray('camera.png', { x: 200, y: 120, w: 96, h: 80 });
      const plane = noisy(g.data, sigma, 17 + sigma);
      const params = autoGroupParams(sigma);
      const ts = withKernels(false, () => denoise([plane], g.width, g.height, sigma, params));
      const wasm = withKernels(true, () => denoise([plane], g.width, g.height, sigma, params));
      expect(bytes(wasm.planes[0]).equals(bytes(ts.planes[0]))).toBe(true);
      expect(wasm.stats).toEqual(ts.stats);
      // The output is a real denoise, not a copy of the input.
      expect(bytes(wasm.planes[0]).equals(bytes(plane))).toBe(false);
    });
  }

  it('an 8-bit (integer) camera.png crop, σ = 10: the i16 matching kernel of the first pass', async () => {
    const g = await fixtureGray('camera.png', { x: 100, y: 220, w: 90, h: 72 });
    const plane = noisy(g.data, 10, 5).map((v) => Math.min(255, Math.max(0, Math.round(v))));
    const params = autoGroupParams(10);
    const ts = withKernels(false, () => denoise([plane], g.width, g.height, 10, params));
    const wasm = withKernels(true, () => denoise([plane], g.width, g.height, 10, params));
    expect(bytes(wasm.planes[0]).equals(bytes(ts.planes[0]))).toBe(true);
    expect(wasm.stats).toEqual(ts.stats);
  });

  it('two planes, a band split (rows 0–37 and 37–80) equals the whole on either path', async () => {
    const g = await fixtureGray('camera.png', { x: 40, y: 300, w: 90, h: 80 });
    const planes = [noisy(g.data, 10, 3), noisy(g.data, 10, 4)];
    const params = autoGroupParams(10);
    const job = { planes, width: g.width, height: g.height, sigmas: [10, 10], params };
    const whole = withKernels(false, () => denoiseBand({ ...job, rowStart: 0, rowEnd: 80 }));
    const top = withKernels(true, () => denoiseBand({ ...job, rowStart: 0, rowEnd: 37 }));
    const bottom = withKernels(true, () => denoiseBand({ ...job, rowStart: 37, rowEnd: 80 }));
    for (let c = 0; c < 2; c++) {
      const joined = new Float32Array(g.width * g.height);
      joined.set(top.planes[c], 0);
      joined.set(bottom.planes[c], 37 * g.width);
      expect(bytes(joined).equals(bytes(whole.planes[c]))).toBe(true);
    }
  });

  it('correlated noise: whitened first pass and the Wiener pass with a noise spectrum, even and odd group sizes', async () => {
    const g = await fixtureGray('camera.png', { x: 160, y: 200, w: 84, h: 70 });
    const plane = noisy(g.data, 10, 8);
    // The 3×3 binomial kernel's noise: variance per 6×6 DCT coefficient and the patches' cross-covariance.
    const psd = analyticPsd(BINOMIAL_3, PSD_LAG);
    const spectrum = Array.from(dctNoiseVariances(psd, 6));
    const noiseCrossCovariance = patchCrossCovariance(psd, 6);
    for (const [groupSize, wienerSize] of [
      [24, 32],
      [23, 21],
    ]) {
      const base = autoGroupParams(10);
      const params: GroupParams = {
        ...base,
        groupSize,
        noiseSpectrum: spectrum,
        noiseCrossCovariance,
        wiener: base.wiener && { ...base.wiener, groupSize: wienerSize },
      };
      const ts = withKernels(false, () => denoise([plane], g.width, g.height, 10, params));
      const wasm = withKernels(true, () => denoise([plane], g.width, g.height, 10, params));
      expect(bytes(wasm.planes[0]).equals(bytes(ts.planes[0]))).toBe(true);
      const white = withKernels(true, () =>
        denoise([plane], g.width, g.height, 10, {
          ...params,
          noiseSpectrum: undefined,
          noiseCrossCovariance: undefined,
        }),
      );
      // The spectrum reaches both passes: the output differs from the white path's, and the group averages' own
      // variance reaches the Wiener pass.
      expect(bytes(white.planes[0]).equals(bytes(ts.planes[0]))).toBe(false);
      const plain = withKernels(true, () =>
        denoise([plane], g.width, g.height, 10, { ...params, noiseCrossCovariance: undefined }),
      );
      expect(bytes(plain.planes[0]).equals(bytes(ts.planes[0]))).toBe(false);
    }
  });

  it('a 13×11 image: groups smaller than the group size (Wiener n not a power of two) match too', () => {
    const r = lcg(99);
    const plane = Float32Array.from({ length: 13 * 11 }, (_, i) => (i % 13 < 6 ? 40 : 200) + 20 * r());
    const params = autoGroupParams(10);
    const ts = withKernels(false, () => denoise([plane], 13, 11, 10, params));
    const wasm = withKernels(true, () => denoise([plane], 13, 11, 10, params));
    expect(bytes(wasm.planes[0]).equals(bytes(ts.planes[0]))).toBe(true);
  });

  it('block matching on a periodic 8-level pattern (many exactly equal distances) picks the same groups in the same order', () => {
    const width = 70;
    const height = 64;
    const guide = Float32Array.from(
      { length: width * height },
      (_, i) => (((i % width) * 3 + Math.floor(i / width) * 5) % 8) * 16,
    );
    const sizes = { patch: 6, groupSize: 24, searchRadius: 24, stride: 6 };
    const run = (on: boolean) =>
      withKernels(on, () => {
        const seen: number[] = [];
        forEachGroup(guide, width, height, sizes, 0, height, (count, posY, posX) => {
          seen.push(count);
          for (let k = 0; k < count; k++) seen.push(posY[k], posX[k]);
        });
        return seen;
      });
    const ts = run(false);
    expect(ts.length).toBeGreaterThan(1000);
    expect(run(true)).toEqual(ts);
  });
});
