// Coefficient coder 2 of the wavelet plane coder (src-main/engine/codec/coeff-coder.ts), the residual layer of
// container 1.3: exact round trips of the quantised coefficients, the decoder's plane equal to the encoder's,
// deterministic bytes, refusal of truncated or extended streams, and coder 1 (stack files, container 1.2)
// unchanged.
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { decodeCoefficientsV2, encodeCoefficientsV2 } from '../../src-main/engine/codec/coeff-coder';
import {
  analysePlane,
  codeAnalysed,
  decodePlane,
  encodePlane,
  reconstructCoded,
} from '../../src-main/engine/codec/wavelet-plane';
import { lcg } from '../helpers/lcg';

/** A scan-like plane: smooth shading, a few sharp edges (text-like strokes) and noise. */
function plane(w: number, h: number, seed: number): Float64Array {
  const rnd = lcg(seed);
  return Float64Array.from({ length: w * h }, (_, i) => {
    const x = i % w;
    const y = Math.floor(i / w);
    const stroke = (x % 11 < 2 && y % 17 > 4) || (y % 13 === 3 && x % 23 > 6) ? -90 : 0;
    return 120 + 60 * Math.sin(x / 9) * Math.cos(y / 14) + stroke + 8 * (rnd() - 0.5);
  });
}

const sizes: Array<[number, number]> = [
  [1, 1],
  [1, 9],
  [13, 7],
  [64, 48],
  [97, 61],
];
const steps = [0.5, 4, 30, 400];

describe('coefficient coder 2', () => {
  it.each(sizes)('round-trips the quantised coefficients exactly (%i×%i, four steps)', (w, h) => {
    const a = analysePlane(plane(w, h, w * 31 + h), w, h);
    for (const step of steps) {
      const c = codeAnalysed(a, step, 2);
      const q = new Int32Array(w * h);
      const offsets = decodeCoefficientsV2(c.bytes, q, w, a.bands);
      expect(Array.from(q)).toEqual(Array.from(c.q));
      expect(Array.from(offsets)).toEqual(Array.from(c.offsets as Float64Array));
      // The decoder's plane is the encoder's reconstruction, bit for bit.
      const back = decodePlane(c.bytes, w, h, step, 2);
      expect(Array.from(back)).toEqual(Array.from(reconstructCoded(a, c)));
    }
  });

  it('reconstruction offsets lower the error of plain q·Δ reconstruction', () => {
    const w = 96;
    const h = 80;
    const a = analysePlane(plane(w, h, 5), w, h);
    const c = codeAnalysed(a, 12, 2);
    const withOffsets = reconstructCoded(a, c);
    const plain = reconstructCoded(a, { ...c, offsets: undefined });
    const src = plane(w, h, 5);
    const sse = (r: Float64Array) => r.reduce((s, v, i) => s + (v - src[i]) ** 2, 0);
    expect(sse(withOffsets)).toBeLessThan(sse(plain));
  });

  it('is deterministic: the same coefficients give the same bytes, and the contexts depend only on coded values', () => {
    const w = 64;
    const h = 48;
    const a = analysePlane(plane(w, h, 9), w, h);
    const c = codeAnalysed(a, 6, 2);
    const again = codeAnalysed(analysePlane(plane(w, h, 9), w, h), 6, 2);
    expect(Buffer.from(again.bytes).equals(Buffer.from(c.bytes))).toBe(true);
    // Coding q directly (not through the quantiser) gives the same stream: only q, Δ and the offsets matter.
    const direct = encodeCoefficientsV2(c.q, a.coeffs, c.steps, w, a.bands);
    expect(Buffer.from(direct.bytes).equals(Buffer.from(c.bytes))).toBe(true);
  });

  it('an all-zero plane costs a few bytes and decodes to zeros', () => {
    const c = encodePlane(new Float64Array(40 * 30), 40, 30, 5, 2);
    expect(c.bytes.length).toBeLessThanOrEqual(6);
    expect(Array.from(decodePlane(c.bytes, 40, 30, 5, 2)).every((v) => v === 0)).toBe(true);
  });

  it('refuses every truncation and an appended byte', () => {
    const w = 48;
    const h = 40;
    const { bytes } = encodePlane(plane(w, h, 3), w, h, 8, 2);
    expect(bytes.length).toBeGreaterThan(50);
    for (let n = 0; n < bytes.length; n++)
      expect(() => decodePlane(bytes.subarray(0, n), w, h, 8, 2), `truncated to ${n}`).toThrow(RangeError);
    const longer = new Uint8Array(bytes.length + 1);
    longer.set(bytes);
    expect(() => decodePlane(longer, w, h, 8, 2)).toThrow(RangeError);
  });

  it('codes a scan-like plane in fewer bytes than coder 1 at the same step, with no more error', () => {
    const w = 128;
    const h = 96;
    const src = plane(w, h, 11);
    const a = analysePlane(src, w, h);
    for (const step of [3, 12]) {
      const c1 = codeAnalysed(a, step, 1);
      const c2 = codeAnalysed(a, step, 2);
      expect(Array.from(c2.q)).toEqual(Array.from(c1.q));
      expect(c2.bytes.length).toBeLessThan(c1.bytes.length);
      const sse = (r: Float64Array) => r.reduce((s, v, i) => s + (v - src[i]) ** 2, 0);
      expect(sse(reconstructCoded(a, c2))).toBeLessThanOrEqual(sse(reconstructCoded(a, c1)));
    }
  });

  it('leaves coder 1 (the default) as it was: a recorded stream digest', () => {
    // Digest recorded from the coder before coder 2 was added (commit a59c0c0, encodePlane of this plane);
    // stack files and container 1.2 residuals depend on these bytes.
    const { bytes } = encodePlane(plane(64, 48, 7), 64, 48, 5);
    expect(createHash('sha256').update(bytes).digest('hex')).toBe(CODER1_DIGEST);
  });
});

const CODER1_DIGEST = '6eee63a240a64b6213d39eac37f491ee0e21f1c61d2e11d441a6121acdffb046';
