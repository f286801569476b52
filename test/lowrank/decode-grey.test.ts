// The report's decode of a grey two-layer file into Float32 samples (src-main/engine/lowrank/decode-image.ts)
// adds the residual while rounding, in one loop: it must give exactly round/clamp(base + residual) of the
// decoded float layers, i.e. the integer decode's samples, at 8 and 16 bits (clamping exercised at 16 bits by
// a residual pushed past the top).
import { beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { decodeImageLayers } from '../../src-main/engine/codec/image-file';
import { roundInto } from '../../src-main/engine/colour';
import { initEngine } from '../../src-main/engine/linalg';
import { decodeImageFile, decodeImageFileSamples } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { decodeImage } from '../../src-main/node/image/decode';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { image } from '../helpers/fixtures';

beforeAll(async () => {
  await initEngine();
});

/** A 160×128 centred crop of the grey photograph, scaled to `max` and brightened so some samples clip. */
async function greyCrop(max: number): Promise<DecodedImage> {
  const img = await decodeImage(image('camera.png'));
  const [w, h] = [160, 128];
  const x0 = (img.width - w) >> 1;
  const y0 = (img.height - h) >> 1;
  const plane = new Float32Array(w * h);
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++) {
      const v = img.planes[0][(y0 + y) * img.width + x0 + x];
      plane[y * w + x] = Math.min(max, Math.round((v * max) / 255) + Math.round(max / 8));
    }
  return {
    ...img,
    width: w,
    height: h,
    bitDepth: max === 255 ? 8 : 16,
    planes: [plane],
    rawBytes: w * h * (max === 255 ? 1 : 2),
  };
}

describe("the report's grey decode into Float32", () => {
  it.each([255, 65535])('max %i: round/clamp(base + residual), as the integer decode', async (max) => {
    const img = await greyCrop(max);
    const r = encodeScan(img, {
      budget: { kind: 'bpp', bpp: 1 },
      tile: 'auto',
      compressors: COMPRESSORS,
      layers: 'auto',
    });
    expect(r.layers.residualBytes).toBeGreaterThan(0);
    const { base, residual } = decodeImageLayers(r.bytes, 'x.rkf');
    const sum = base[0].map((v, i) => v + (residual[0] as Float64Array)[i]);
    const want = new Float32Array(sum.length);
    roundInto(sum, sum.length, max, want, 0);
    const got = decodeImageFile(r.bytes, 'x.rkf').samples[0];
    expect(got).toEqual(want);
    expect(Array.from(got)).toEqual(Array.from(decodeImageFileSamples(r.bytes, 'x.rkf').samples[0]));
    // The sum leaves the sample range somewhere, so the clamp is exercised.
    expect(sum.some((v) => v > max + 0.5 || v < -0.5)).toBe(true);
  });
});
