// The report's figures of a grey file measured band by band while it is decoded
// (src-main/engine/lowrank/decoded-figures.ts), with no decoded plane: each must equal, bit for bit, the same
// figure computed on the whole decoded plane by the project's whole-plane functions (psnrPlanes, ssim, one
// running sum of squared errors, the exact-samples test), at 8 and 16 bits, with and without an alpha plane,
// for a file decoded in several bands (taller than a band). The decoded samples, read afterwards, are the
// whole decode's.
import { beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { forgetCodes } from '../../src-main/engine/codec/coded-planes';
import { initEngine } from '../../src-main/engine/linalg';
import { decodeImageFile } from '../../src-main/engine/lowrank/decode-image';
import { measureGreyFile, measureGreySse } from '../../src-main/engine/lowrank/decoded-figures';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { runHere, type SideRunner } from '../../src-main/engine/lowrank/side-jobs';
import { psnrPlanes, ssim } from '../../src-main/engine/metrics';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { greyScan } from './noisy-field';

beforeAll(async () => {
  await initEngine();
});

/** The whole-plane figures of a decoded file, as the report computed them before streaming. */
function wholeFigures(img: DecodedImage, decoded: Float32Array[], max: number) {
  const [a, b] = [img.planes[0], decoded[0]];
  let sse = 0;
  for (let i = 0; i < a.length; i++) {
    const d = a[i] - b[i];
    sse += d * d;
  }
  const lossless =
    decoded.length === img.planes.length &&
    decoded.every((p, c) => p.every((v, i) => v === img.planes[c][i]));
  return { psnr: psnrPlanes([a], [b], max), sse, ssim: ssim(a, b, img.width, img.height, max), lossless };
}

describe('grey figures measured band by band', () => {
  it.each([
    [8, false, 0.6],
    [16, false, 0.6],
    [8, true, 1.5],
  ] as const)('%i-bit, alpha %s, %f bpp: the whole-plane figures bit for bit', (bitDepth, alpha, bpp) => {
    const [w, h] = [150, 203];
    const img = greyScan(w, h, bitDepth, alpha);
    const max = bitDepth === 16 ? 65535 : 255;
    const r = encodeScan(img, {
      budget: { kind: 'bpp', bpp },
      tile: 0,
      compressors: COMPRESSORS,
      layers: 'auto',
    });
    forgetCodes();
    const whole = decodeImageFile(r.bytes, img.file).samples;
    const want = wholeFigures(img, whole, max);
    expect(want.sse).toBeGreaterThan(0);
    expect(r.layers.residualBytes).toBeGreaterThan(0);
    const got = measureGreyFile(r.bytes, img, max);
    expect(Object.is(got.psnr, want.psnr)).toBe(true);
    expect(Object.is(got.sse, want.sse)).toBe(true);
    expect(Object.is(got.ssim, want.ssim)).toBe(true);
    expect(got.lossless).toBe(false);
    expect(Object.is(measureGreySse(r.bytes, img), want.sse)).toBe(true);
    // With a second thread (../../src-main/engine/lowrank/ssim-bands): its SSIM jobs summed at once, or only
    // when joined (taken back), give the same figures.
    const later: SideRunner = (name, args) => () => runHere(name, args)();
    for (const side of [runHere, later]) {
      const two = measureGreyFile(r.bytes, img, max, side);
      expect([two.psnr, two.sse, two.ssim, two.lossless]).toEqual([got.psnr, got.sse, got.ssim, false]);
      expect(Object.is(two.ssim, want.ssim)).toBe(true);
    }
    // The report's own figures (encodeScan measured band by band) are the same.
    expect(Object.is(r.psnr, want.psnr)).toBe(true);
    expect(Object.is(r.ssim, want.ssim)).toBe(true);
    // Samples read afterwards: the whole decode's, every channel.
    expect(got.decoded.samples.length).toBe(whole.length);
    for (let c = 0; c < whole.length; c++) expect(got.decoded.samples[c]).toEqual(whole[c]);
  });

  it('a file that decodes to the source exactly is lossless; one changed sample or alpha value is not', () => {
    const [w, h] = [40, 90];
    const img = greyScan(w, h, 8, true);
    const r = encodeScan(img, {
      budget: { kind: 'psnr', db: 99 },
      tile: 0,
      compressors: COMPRESSORS,
      layers: 'auto',
    });
    forgetCodes();
    const exact = decodeImageFile(r.bytes, img.file).samples;
    expect(wholeFigures(img, exact, 255).lossless).toBe(true);
    expect(measureGreyFile(r.bytes, img, 255).lossless).toBe(true);
    for (const c of [0, 1]) {
      const changed = { ...img, planes: img.planes.map((p) => p.slice()) };
      changed.planes[c][w * 70 + 3] = changed.planes[c][w * 70 + 3] === 0 ? 1 : 0;
      expect(measureGreyFile(r.bytes, changed, 255).lossless).toBe(false);
    }
  });
});
