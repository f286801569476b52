// The WebAssembly port of coefficient coder 2 and its range coder (src-main/engine/codec/wasm/assembly/coder.ts)
// against the TypeScript coder it ports (src-main/engine/codec/coeff-coder.ts, range-coder.ts), which stays the
// definition of the format: for every plane the two must write the same bytes and the same reconstruction
// offsets, and each must decode the other's bytes to the same coefficients. Corrupt streams must be refused by
// both with the same error, and never hang.
import { afterEach, describe, expect, it } from 'vitest';
import { decodeCoefficientsV2, encodeCoefficientsV2 } from '../../src-main/engine/codec/coeff-coder';
import { coderWasmLoaded, setCoderWasmDisabled } from '../../src-main/engine/codec/wasm/coder-runtime';
import { analysePlane, quantiseAnalysed } from '../../src-main/engine/codec/wavelet-plane';
import type { Band } from '../../src-main/engine/codec/wavelet-transform';
import { lcg } from '../helpers/lcg';

afterEach(() => setCoderWasmDisabled(false));

type Coded = { bytes: Uint8Array; offsets: Float64Array };

/** Run `f` on the TypeScript coder (wasm = false) or on the port. */
function on<T>(wasm: boolean, f: () => T): T {
  setCoderWasmDisabled(!wasm);
  try {
    return f();
  } finally {
    setCoderWasmDisabled(false);
  }
}

const encode = (
  wasm: boolean,
  q: Int32Array,
  x: Float64Array,
  steps: Float64Array,
  w: number,
  bands: Band[],
) => on(wasm, () => encodeCoefficientsV2(Int32Array.from(q), x, steps, w, bands));

/** Typed-array contents as a string, for fast exact comparisons of large planes. */
const text = (x: Int32Array | Float64Array) =>
  Buffer.from(x.buffer, x.byteOffset, x.byteLength).toString('base64');

/** The decoded coefficients and offsets (as text), or the error message. */
function decode(wasm: boolean, bytes: Uint8Array, n: number, w: number, bands: Band[]) {
  const q = new Int32Array(n);
  try {
    const offsets = on(wasm, () => decodeCoefficientsV2(bytes, q, w, bands));
    return { q: text(q), offsets: text(offsets) };
  } catch (e) {
    expect(e).toBeInstanceOf(RangeError);
    return { error: (e as Error).message };
  }
}

/** Both coders agree on q: same bytes and offsets, and each decodes both to q. Returns the bytes. */
function agree(q: Int32Array, x: Float64Array, steps: Float64Array, w: number, bands: Band[]): Coded {
  const ts = encode(false, q, x, steps, w, bands);
  const port = encode(true, q, x, steps, w, bands);
  expect(Buffer.from(port.bytes).equals(Buffer.from(ts.bytes))).toBe(true);
  expect(Array.from(port.offsets)).toEqual(Array.from(ts.offsets));
  for (const wasm of [false, true]) {
    const back = decode(wasm, ts.bytes, q.length, w, bands);
    expect(back).toEqual({ q: text(q), offsets: text(ts.offsets) });
  }
  return ts;
}

/** A scan-like plane with grey range `max`: shading, strokes and seeded noise. */
function plane(w: number, h: number, seed: number, max: number): Float64Array {
  const rnd = lcg(seed);
  return Float64Array.from({ length: w * h }, (_, i) => {
    const x = i % w;
    const y = Math.floor(i / w);
    const stroke = (x % 11 < 2 && y % 17 > 4) || (y % 13 === 3 && x % 23 > 6) ? -0.35 : 0;
    const v = 0.5 + 0.25 * Math.sin(x / 9) * Math.cos(y / 14) + stroke + 0.04 * (rnd() - 0.5);
    return Math.round(max * Math.min(1, Math.max(0, v)));
  });
}

/** Quantise `src` at pixel-domain `step` and check that both coders agree on it. */
function agreeOnPlane(src: Float64Array, w: number, h: number, step: number): Coded {
  const a = analysePlane(src, w, h);
  const { q, steps } = quantiseAnalysed(a, step);
  return agree(q, a.coeffs, steps, w, a.bands);
}

describe('coefficient coder 2 in WebAssembly', () => {
  it('is loaded in this runtime (Node), so the comparisons below test the port', () => {
    encode(true, new Int32Array(4), new Float64Array(4), Float64Array.of(1), 2, [band(0, 0, 2, 2, 0, 0)]);
    expect(coderWasmLoaded()).toBe(true);
  });

  it.each([
    [256, 192, 255, [0.7, 3, 12, 60]],
    [97, 61, 255, [1, 9]],
    [160, 120, 65535, [2, 257 * 3, 257 * 40]],
  ])(
    'writes the TypeScript bytes for a %i×%i plane of range %i and decodes them alike',
    (w, h, max, steps) => {
      const src = plane(w, h, w + h, max);
      for (const step of steps) agreeOnPlane(src, w, h, step);
    },
  );

  it('agrees on 16-bit planes coded finely enough for the Exp-Golomb escape (|q| ≥ 15)', () => {
    const w = 48;
    const h = 40;
    const a = analysePlane(plane(w, h, 5, 65535), w, h);
    const { q, steps } = quantiseAnalysed(a, 0.25);
    expect(q.reduce((m, v) => Math.max(m, Math.abs(v)), 0)).toBeGreaterThan(2 ** 19);
    agree(q, a.coeffs, steps, w, a.bands);
  });

  it.each([
    [1, 1],
    [1, 37],
    [37, 1],
    [2, 2],
    [11, 300],
    [300, 11],
    [12, 12],
    [13, 25],
  ])('agrees on tiny and thin planes (%i×%i)', (w, h) => {
    for (const step of [0.5, 4, 50]) agreeOnPlane(plane(w, h, w * 7 + h, 255), w, h, step);
  });

  it('agrees on an all-zero plane and on a plane whose only non-zero values are in LL', () => {
    const zero = agreeOnPlane(new Float64Array(40 * 30), 40, 30, 5);
    expect(zero.bytes.length).toBeLessThanOrEqual(6);
    const a = analysePlane(new Float64Array(64 * 64).fill(200), 64, 64);
    const { q, steps } = quantiseAnalysed(a, 5);
    const ll = a.bands[0];
    expect(q.some((v, i) => v !== 0 && (i % 64 >= ll.w || Math.floor(i / 64) >= ll.h))).toBe(false);
    expect(q[0]).not.toBe(0);
    agree(q, a.coeffs, steps, 64, a.bands);
  });

  it('agrees on band lists with empty bands and missing parents or siblings', () => {
    const w = 8;
    const h = 6;
    const rnd = lcg(3);
    const bands = [
      band(0, 0, 2, 2, 0, 2),
      band(2, 0, 0, 2, 1, 2), // an empty HL band
      band(0, 2, 2, 1, 2, 2),
      band(2, 2, 2, 1, 3, 2),
      band(4, 0, 4, 3, 1, 1), // HL of level 1 whose parent is the empty band
      band(4, 3, 4, 3, 3, 1), // HH of level 1 with no LH sibling
    ];
    // Values only where a band codes them (the coder leaves the rest of q untouched).
    const inside = (i: number) =>
      bands.some(
        (b) =>
          i % w >= b.x0 && i % w < b.x0 + b.w && Math.floor(i / w) >= b.y0 && Math.floor(i / w) < b.y0 + b.h,
      );
    const q = Int32Array.from({ length: w * h }, (_, i) =>
      inside(i) ? Math.round((rnd() - 0.5) * 9 * rnd()) : 0,
    );
    const x = Float64Array.from(q, (v) => v + (rnd() - 0.5) * 0.9);
    agree(
      q,
      x,
      Float64Array.from(bands, (_, i) => 1 + i / 4),
      w,
      bands,
    );
    const rnd2 = lcg(4);
    const all = Int32Array.from(q, () => Math.round((rnd2() - 0.5) * 5));
    agree(all, x, Float64Array.of(1), w, [band(0, 0, 8, 6, 1, 1)]);
    agree(new Int32Array(w * h), x, new Float64Array(0), w, []);
  });

  it('refuses magnitudes past the coder range with the TypeScript message', () => {
    const a = analysePlane(plane(32, 32, 1, 255), 32, 32);
    const { q, steps } = quantiseAnalysed(a, 2);
    q[q.length - 1] = 2 ** 30 + 7; // a detail coefficient
    const ll = Int32Array.from(q);
    ll[q.length - 1] = 0;
    ll[0] = -(2 ** 31); // the LL band: a prediction difference far past 2^30
    for (const bad of [q, ll]) {
      const err = (wasm: boolean) => () => encode(wasm, bad, a.coeffs, steps, 32, a.bands);
      expect(err(false)).toThrow(RangeError);
      const message = (() => {
        try {
          err(false)();
        } catch (e) {
          return (e as Error).message;
        }
      })();
      expect(message).toMatch(/^integer \d+ outside the coder's range$/);
      expect(err(true)).toThrow(message);
    }
  });

  it('refuses corrupt streams as the TypeScript decoder does: truncations, an extra byte, flipped bytes', () => {
    const w = 64;
    const h = 48;
    const a = analysePlane(plane(w, h, 8, 255), w, h);
    const { q, steps } = quantiseAnalysed(a, 3);
    const { bytes } = agree(q, a.coeffs, steps, w, a.bands);
    const damaged: Uint8Array[] = [];
    for (let n = 0; n < bytes.length; n += 7) damaged.push(bytes.subarray(0, n));
    damaged.push(Uint8Array.of(...bytes, 0));
    const rnd = lcg(11);
    for (let t = 0; t < 200; t++) {
      const d = Uint8Array.from(bytes);
      d[Math.floor(rnd() * d.length)] ^= 1 + Math.floor(rnd() * 255);
      damaged.push(d);
    }
    // Streams of 0xff bytes drive the decoder into long Exp-Golomb prefixes.
    damaged.push(new Uint8Array(64).fill(0xff), Uint8Array.of(0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff));
    const messages = new Set<string>();
    for (const d of damaged) {
      const ts = decode(false, d, w * h, w, a.bands);
      expect(decode(true, d, w * h, w, a.bands)).toEqual(ts);
      if (ts.error) messages.add(ts.error.replace(/\d+/, 'N'));
    }
    // Every refusal of the decoder is reached, each with the same text from both coders.
    expect(messages).toContain('plane data ends early (truncated or corrupt)');
    expect(messages).toContain('corrupt plane data (reconstruction offset)');
    expect(messages).toContain('corrupt integer code (Exp-Golomb prefix too long)');
    expect(messages).toContain(
      'plane data has N unused bytes at its end (damaged, or the header does not match it)',
    );
  });
});

function band(x0: number, y0: number, w: number, h: number, orient: number, level: number): Band {
  return { x0, y0, w, h, orient, level, gain: 1 };
}
