// The exact plane coder (engine/codec/lossless-coder) and the reversible colour transform
// (engine/codec/lossless-image): exact round trips on every shape and depth, the sampled size estimate, and
// the properties the lossless choice relies on (flat planes cost almost nothing, noise cannot shrink).
import { describe, expect, it } from 'vitest';
import {
  decodeExactPlane,
  type ExactPlaneShape,
  encodeExactPlane,
} from '../../src-main/engine/codec/lossless-coder';
import { estimateExactTotal, exactPlanes, sourceFromExact } from '../../src-main/engine/codec/lossless-image';
import { lcg } from '../helpers/lcg';

const shape = (width: number, height: number, bits = 8): ExactPlaneShape => ({
  width,
  height,
  bits,
  energyShift: Math.max(0, bits - 8),
});

/** A smooth image with sharp-edged flat discs (piecewise constant and smooth parts), in [0, 2^bits). */
function scene(w: number, h: number, bits: number): Int32Array {
  const max = 2 ** bits - 1;
  const p = new Int32Array(w * h);
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++) {
      const disc = (x - w / 2) ** 2 + (y - h / 2) ** 2 < (Math.min(w, h) / 3) ** 2;
      p[y * w + x] = disc ? Math.round(max * 0.8) : Math.round(max * (0.3 + 0.2 * Math.sin(x / 7 + y / 11)));
    }
  return p;
}

function noise(n: number, bits: number, seed: number): Int32Array {
  const r = lcg(seed);
  return Int32Array.from({ length: n }, () => Math.floor(r() * 2 ** bits));
}

function roundTrip(p: Int32Array, s: ExactPlaneShape): Uint8Array {
  const bytes = encodeExactPlane(p, s);
  expect(Array.from(decodeExactPlane(bytes, s))).toEqual(Array.from(p));
  return bytes;
}

describe('exact plane coder', () => {
  it('decodes 8-bit and 16-bit planes to the same samples', () => {
    roundTrip(scene(70, 50, 8), shape(70, 50));
    roundTrip(scene(70, 50, 16), shape(70, 50, 16));
    // Extreme values next to each other: the residual wraps modulo 2^bits and back.
    const edges = Int32Array.from({ length: 40 * 9 }, (_, i) => ((i * 7) % 3 === 0 ? 255 : 0));
    roundTrip(edges, shape(40, 9));
  });

  it('handles 1×1, 1×N, N×1 and constant planes', () => {
    roundTrip(Int32Array.of(200), shape(1, 1));
    roundTrip(noise(37, 8, 1), shape(1, 37));
    roundTrip(noise(37, 8, 2), shape(37, 1));
    const flat = roundTrip(new Int32Array(64 * 64).fill(77), shape(64, 64));
    // 4096 equal samples: the zero decisions adapt towards certainty, so the whole plane takes a few bytes.
    expect(flat.length).toBeLessThan(40);
  });

  it('codes random noise exactly and no smaller than its entropy (8 bits per sample)', () => {
    const p = noise(64 * 64, 8, 3);
    const bytes = roundTrip(p, shape(64, 64));
    expect(bytes.length).toBeGreaterThan(64 * 64 * 0.99);
  });

  it('codes a piecewise-constant scene in far less than a bit per sample', () => {
    const w = 200;
    const p = new Int32Array(w * w);
    for (let y = 0; y < w; y++)
      for (let x = 0; x < w; x++)
        p[y * w + x] = (x - 100) ** 2 + (y - 90) ** 2 < 60 ** 2 ? 180 : x < 40 ? 20 : 90;
    expect(roundTrip(p, shape(w, w)).length * 8).toBeLessThan(0.1 * w * w);
  });

  it('estimates exactly when the sample covers the plane, and within 25 % from a 10 % sample', () => {
    const p = scene(120, 200, 8);
    const real = encodeExactPlane(p, shape(120, 200)).length;
    const src = [Float32Array.from(p)];
    expect(estimateExactTotal(src, 120, 200, 8, 120 * 200)).toBe(real);
    const est = estimateExactTotal(src, 120, 200, 8, 120 * 20);
    expect(est / real).toBeGreaterThan(0.75);
    expect(est / real).toBeLessThan(1.25);
  });

  it('refuses a truncated stream', () => {
    const p = noise(32 * 32, 8, 4);
    const bytes = encodeExactPlane(p, shape(32, 32));
    expect(() => decodeExactPlane(bytes.subarray(0, bytes.length - 40), shape(32, 32))).toThrow(/ends early/);
  });
});

describe('reversible colour transform (ISO/IEC 15444-1 Annex G.2)', () => {
  it.each([8, 16] as const)('returns every %i-bit R, G, B triple, extremes included', (depth) => {
    const max = 2 ** depth - 1;
    const values = [0, 1, 2, 3, max - 2, max - 1, max, Math.floor(max / 2)];
    const trip: number[][] = [[], [], []];
    for (const r of values)
      for (const g of values)
        for (const b of values)
          trip.forEach((c, k) => {
            c.push([r, g, b][k]);
          });
    const src = trip.map((c) => Float32Array.from(c));
    const coded = exactPlanes(src, depth, true);
    // The chroma planes stay inside the one-bit-wider range they are coded with.
    for (const p of coded.slice(1)) for (const v of p) expect(v >= 0 && v < 2 ** (depth + 1)).toBe(true);
    const out = [0, 1, 2].map(() => new Float32Array(src[0].length));
    sourceFromExact(coded, depth, out, src[0].length);
    expect(out.map((o) => Array.from(o))).toEqual(src.map((s) => Array.from(s)));
  });
});
