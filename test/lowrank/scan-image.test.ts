// A scan given to the whole-scan encoder as its decoder's integer samples (src-main/engine/lowrank/scan-image.ts,
// as src-main/node/image/integer-samples.ts decodes it for `compress`): every 8-bit and 16-bit sample is exact in
// f32, so the file and every figure must be those of the same scan given as a float plane, bit for bit, on the
// residual-only shortcut (which reads the integers: arena load, plane energy, spread crops, squared errors,
// SSIM) and on every other path (which widens them first, floatScan).
import { beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { forgetCodes } from '../../src-main/engine/codec/coded-planes';
import { initEngine } from '../../src-main/engine/linalg';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import type { EncodeOptions } from '../../src-main/engine/lowrank/encode-options';
import { floatScan, type ScanImage } from '../../src-main/engine/lowrank/scan-image';
import { runHere } from '../../src-main/engine/lowrank/side-jobs';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { greyScan } from './noisy-field';

beforeAll(async () => {
  await initEngine();
});

/** The scan with its planes as shared integer samples (what decodeIntegerSamples gives). */
function integerScan(img: DecodedImage): ScanImage {
  const n = img.width * img.height;
  const wide = img.bitDepth === 16;
  const planes = img.planes.map((f) => {
    const buffer = new SharedArrayBuffer(n * (wide ? 2 : 1));
    const p = wide ? new Uint16Array(buffer) : new Uint8Array(buffer);
    p.set(f);
    return p;
  });
  return { ...img, planes };
}

/** A side runner computing each job on this thread when joined (the jobs' arrays are not copied). */
const later = ((name, args) => () => runHere(name, args)()) as typeof runHere;

function encodeBoth(img: DecodedImage, opts: EncodeOptions) {
  const float = encodeScan(img, opts);
  forgetCodes();
  const integer = encodeScan(integerScan(img), opts);
  forgetCodes();
  return { float, integer };
}

/** What must agree: the file and every reported figure (timings aside). */
const figures = (r: ReturnType<typeof encodeScan>) => ({
  psnr: r.psnr,
  ssim: r.ssim,
  errors: r.errors,
  lossless: r.lossless,
  layers: r.layers,
  ranks: r.ranks,
});

describe('integer samples give the float plane’s file and figures', () => {
  it.each([
    [8, { kind: 'bpp', bpp: 0.5 }],
    [16, { kind: 'psnr', db: 62 }],
  ] as const)('%i-bit, residual-only shortcut, budget %o', (bits, budget) => {
    const img = greyScan(1320, 1260, bits, false);
    const { float, integer } = encodeBoth(img, {
      budget,
      tile: 'auto',
      compressors: COMPRESSORS,
      layers: 'auto',
      side: later,
      exact: 'auto',
    });
    expect(float.layers?.chosen).toBe('residual-only');
    expect(Buffer.from(integer.bytes).equals(Buffer.from(float.bytes))).toBe(true);
    expect(figures(integer)).toEqual(figures(float));
  });

  it('a path without the shortcut (a small scan, base layer only) widens them first', () => {
    const img = greyScan(300, 200, 8, false);
    const { float, integer } = encodeBoth(img, {
      budget: { kind: 'bpp', bpp: 1 },
      tile: 'auto',
      compressors: COMPRESSORS,
      layers: 'base',
    });
    expect(float.layers?.chosen).not.toBe('residual-only');
    expect(Buffer.from(integer.bytes).equals(Buffer.from(float.bytes))).toBe(true);
    expect(figures(integer)).toEqual(figures(float));
  });
});

describe('floatScan', () => {
  it('gives a float scan back as it is, and integer samples as shared float copies', () => {
    const img = greyScan(37, 23, 16, false);
    expect(floatScan(img)).toBe(img);
    const wide = floatScan(integerScan(img));
    expect(wide.planes[0]).toBeInstanceOf(Float32Array);
    expect(wide.planes[0].buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(wide.planes[0]).toEqual(img.planes[0]);
    expect({ ...wide, planes: [] }).toEqual({ ...img, planes: [] });
  });
});
