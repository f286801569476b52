// The report's decode of a file just written rebuilds the residual planes from the coefficients the encoder
// kept (src-main/engine/codec/coded-planes.ts) instead of range-decoding them. It must equal a real decode of
// the written bytes, bit for bit: plane by plane (both coders; 8-bit, 16-bit and colour-like planes) and
// through the whole residual-only encode of a large scan (8-bit and 16-bit).
import { beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { forgetCodes, recallCode, recordingCodes } from '../../src-main/engine/codec/coded-planes';
import { analysePlane, codeAnalysed, decodePlane } from '../../src-main/engine/codec/wavelet-plane';
import { initEngine } from '../../src-main/engine/linalg';
import { Rng } from '../../src-main/engine/linalg/random';
import { decodeImageFile } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { COMPRESSORS } from '../../src-main/node/services/compress';

beforeAll(async () => {
  await initEngine();
});

/** A smooth field with edges plus seeded noise, scaled to `max`. */
function field(w: number, h: number, seed: number, max: number): Float64Array {
  const rng = new Rng(seed);
  const out = new Float64Array(w * h);
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++) {
      const v = 0.5 + 0.3 * Math.sin(x / 9 + seed) * Math.cos(y / 13) + (x > w / 2 ? 0.15 : 0);
      out[y * w + x] = Math.max(0, Math.min(max, Math.round(max * v + (max / 100) * rng.normal())));
    }
  return out;
}

const same = (a: ArrayLike<number>, b: ArrayLike<number>) =>
  a.length === b.length && Array.prototype.every.call(a, (v: number, i: number) => Object.is(v, b[i]));

describe('decoding bytes this process just encoded', () => {
  it('rebuilds each plane exactly as the range decoder does (coders 1 and 2; 8-bit, 16-bit, three planes)', () => {
    const [w, h] = [97, 83];
    const cases = [
      { planes: [field(w, h, 1, 255)], step: 3.5 },
      { planes: [field(w, h, 2, 65535)], step: 700 },
      // Three planes coded in one go, as a colour scan's Y, Cb, Cr (chroma centred on 0).
      { planes: [field(w, h, 3, 255), field(w, h, 4, 40).map((v) => v - 20), field(w, h, 5, 30)], step: 2 },
    ];
    for (const coder of [1, 2] as const)
      for (const { planes, step } of cases) {
        forgetCodes();
        const coded = recordingCodes(() =>
          planes.map((p) => codeAnalysed(analysePlane(p, w, h), step, coder)),
        );
        // The payloads as read back from a file: equal bytes, not the same objects.
        const copies = coded.map((c) => Uint8Array.from(c.bytes));
        for (let k = 0; k < copies.length; k++)
          expect(recallCode(copies[k], w, h, step, coder)).toBe(coded[k]);
        const known = copies.map((b) => decodePlane(b, w, h, step, coder));
        forgetCodes();
        const real = copies.map((b) => decodePlane(b, w, h, step, coder));
        for (let k = 0; k < known.length; k++) expect(same(known[k], real[k])).toBe(true);
      }
  });

  it('is used only for the same bytes, size, step and coder, and only inside a recording', () => {
    const [w, h] = [64, 48];
    const a = analysePlane(field(w, h, 7, 255), w, h);
    forgetCodes();
    const outside = codeAnalysed(a, 2, 2);
    expect(recallCode(outside.bytes, w, h, 2, 2)).toBeUndefined();
    const c = recordingCodes(() => codeAnalysed(a, 2, 2));
    expect(recallCode(c.bytes, w, h, 2, 2)).toBe(c);
    expect(recallCode(c.bytes, w, h, 2.5, 2)).toBeUndefined();
    expect(recallCode(c.bytes, w, h, 2, 1)).toBeUndefined();
    expect(recallCode(c.bytes, h, w, 2, 2)).toBeUndefined();
    const changed = Uint8Array.from(c.bytes);
    changed[changed.length >> 1] ^= 1;
    expect(recallCode(changed, w, h, 2, 2)).toBeUndefined();
    forgetCodes();
    expect(recallCode(c.bytes, w, h, 2, 2)).toBeUndefined();
  });

  it('the residual-only encode of a large scan reports the samples a fresh decode of its file gives (8- and 16-bit)', () => {
    const [W, H] = [1320, 1260];
    for (const bitDepth of [8, 16] as const) {
      const max = bitDepth === 16 ? 65535 : 255;
      const img = {
        file: 'scan.png',
        width: W,
        height: H,
        channels: 1,
        bitDepth,
        colour: 'gray',
        hasAlpha: false,
        planes: [Float32Array.from(field(W, H, 11, max))],
        meta: { format: 'png' },
        inputBytes: W * H,
        rawBytes: W * H * (bitDepth / 8),
        sourceSha256: '0'.repeat(64),
      } as DecodedImage;
      const budget = { kind: 'bpp' as const, bpp: 0.5 };
      const r = encodeScan(img, { budget, tile: 'auto', compressors: COMPRESSORS, layers: 'auto' });
      expect(r.layers?.chosen).toBe('residual-only');
      forgetCodes();
      const fresh = decodeImageFile(r.bytes, img.file);
      expect(fresh.samples.length).toBe(1);
      expect(same(r.decoded.samples[0], fresh.samples[0])).toBe(true);
    }
  });
});
