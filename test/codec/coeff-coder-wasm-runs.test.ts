// The WebAssembly coefficient coder (src-main/engine/codec/wasm/assembly/coder.ts) takes shortcuts the TypeScript
// coder (coeff-coder.ts, the definition of the format) does not: rows in two passes with 16-column vector steps,
// runs of insignificant coefficients whose context lives in locals, and contexts that no longer move on a 0. These
// planes drive each shortcut to its edges (sparse and dense rows, significant values at the first and last column,
// widths around multiples of 16, odd sizes whose sibling and parent bands are narrower, real scans at low rates),
// and the port must still write the TypeScript bytes, decode them to the same values and refuse damaged streams
// with the same text.
import { readFileSync } from 'node:fs';
import sharp from 'sharp';
import { afterEach, describe, expect, it } from 'vitest';
import { decodeCoefficientsV2, encodeCoefficientsV2 } from '../../src-main/engine/codec/coeff-coder';
import { setCoderWasmDisabled } from '../../src-main/engine/codec/wasm/coder-runtime';
import { analysePlane, quantiseAnalysed } from '../../src-main/engine/codec/wavelet-plane';
import type { Band } from '../../src-main/engine/codec/wavelet-transform';
import { image } from '../helpers/fixtures';
import { lcg } from '../helpers/lcg';

afterEach(() => setCoderWasmDisabled(false));

interface Plane {
  q: Int32Array;
  x: Float64Array;
  steps: Float64Array;
  w: number;
  bands: Band[];
}

/** f on the TypeScript coder (port = false) or on the port; an error becomes its message. */
function run<T>(port: boolean, f: () => T): T | string {
  setCoderWasmDisabled(!port);
  try {
    return f();
  } catch (e) {
    expect(e).toBeInstanceOf(RangeError);
    return (e as Error).message;
  } finally {
    setCoderWasmDisabled(false);
  }
}

const hex = (a: ArrayBufferView) => Buffer.from(a.buffer, a.byteOffset, a.byteLength).toString('base64');

/** Decoded coefficients and offsets of `bytes` as text, or the refusal's message. */
function decoded(port: boolean, bytes: Uint8Array, p: Plane): string {
  const q = new Int32Array(p.q.length);
  const r = run(port, () => decodeCoefficientsV2(bytes, q, p.w, p.bands));
  return typeof r === 'string' ? r : `${hex(q)}|${hex(r)}`;
}

/** Both coders write the same bytes for p and decode them to p.q; returns the bytes. */
function same(p: Plane): Uint8Array {
  const code = (port: boolean) =>
    run(port, () => encodeCoefficientsV2(Int32Array.from(p.q), p.x, p.steps, p.w, p.bands));
  const ts = code(false);
  const port = code(true);
  if (typeof ts === 'string' || typeof port === 'string') throw new Error(`encode refused: ${ts} / ${port}`);
  expect(hex(port.bytes)).toBe(hex(ts.bytes));
  const want = `${hex(p.q)}|${hex(ts.offsets)}`;
  expect(decoded(true, ts.bytes, p)).toBe(want);
  expect(decoded(false, ts.bytes, p)).toBe(want);
  return ts.bytes;
}

/** The quantised plane of `src` (w×h) at pixel-domain `step`. */
function quantised(src: ArrayLike<number>, w: number, h: number, step: number): Plane {
  const a = analysePlane(src, w, h);
  const { q, steps } = quantiseAnalysed(a, step);
  return { q, x: a.coeffs, steps, w, bands: a.bands };
}

/** A plane whose detail coefficients are non-zero with probability `density`, magnitudes up to `top`. */
function sparse(w: number, h: number, density: number, top: number, seed: number): Plane {
  const p = quantised(new Float64Array(w * h), w, h, 1);
  const rnd = lcg(seed);
  for (let i = 0; i < p.q.length; i++)
    if (rnd() < density) p.q[i] = (rnd() < 0.5 ? -1 : 1) * (1 + Math.floor(rnd() ** 3 * top));
  p.x = Float64Array.from(p.q, (v) => v + (rnd() - 0.5) * 0.8);
  return p;
}

/** A grey fixture scan as a plane of 0–255 values, resized to w×h. */
async function scan(name: string, w: number, h: number): Promise<Float64Array> {
  const { data } = await sharp(readFileSync(image(name)))
    .toColourspace('b-w')
    .extractChannel(0)
    .resize(w, h, { fit: 'fill' })
    .raw()
    .toBuffer({ resolveWithObject: true });
  return Float64Array.from(data);
}

describe('the WebAssembly coefficient coder on sparse planes and runs of zeros', () => {
  it.each([
    [64, 64, 0.002],
    [97, 83, 0.01],
    [161, 47, 0.05],
    [33, 130, 0.3],
    [200, 150, 0.9],
  ])('writes the TypeScript bytes for a %i×%i plane of density %f', (w, h, density) => {
    for (const top of [1, 40, 5000]) same(sparse(w, h, density, top, w * h + top));
  });

  it('settles a context over long quiet runs, then leaves it on a lone significant value', () => {
    // One 1024-column plane: level-1 bands 512 wide, zero except a few isolated values at the row ends and in
    // the middle, so runs of hundreds of zeros settle the first context, and the values break them.
    const w = 1024;
    const h = 64;
    const p = sparse(w, h, 0, 1, 1);
    for (const [x, y, v] of [
      [512, 0, 1],
      [1023, 1, -3],
      [700, 40, 2],
      [512, 63, -1],
      [1023, 63, 7],
      [0, 40, 1],
      [511, 50, -2],
    ])
      p.q[y * w + x] = v;
    p.x = Float64Array.from(p.q);
    const bytes = same(p);
    // The run costs far less than a bit per coefficient: the zeros are nearly free once the context settles.
    expect(bytes.length * 8).toBeLessThan(p.q.length / 50);
  });

  it('handles widths around the 16-column vector step and odd sizes (narrower siblings and parents)', () => {
    for (const w of [15, 16, 17, 31, 32, 33, 34, 35, 47, 65])
      for (const h of [3, 17, 34]) same(sparse(w, h, 0.08, 20, w * 100 + h));
  });

  it.each([
    ['camera.png', 660, 630, [3, 12, 40]],
    ['page.png', 771, 383, [2, 9, 30]],
    ['moon.png', 515, 517, [1, 6, 25]],
  ] as const)(
    'writes the TypeScript bytes for %s at %i×%i and decodes them alike',
    async (name, w, h, steps) => {
      const src = await scan(name, w, h);
      for (const step of steps) same(quantised(src, w, h, step));
    },
  );

  it('refuses damaged streams of a sparse plane as the TypeScript decoder does', () => {
    const p = sparse(120, 90, 0.03, 30, 5);
    const bytes = same(p);
    const rnd = lcg(17);
    const damaged: Uint8Array[] = [bytes.subarray(0, bytes.length - 1), Uint8Array.of(...bytes, 0)];
    for (let t = 0; t < 150; t++) {
      const d = Uint8Array.from(bytes);
      d[Math.floor(rnd() * d.length)] ^= 1 + Math.floor(rnd() * 255);
      damaged.push(d);
    }
    let refused = 0;
    for (const d of damaged) {
      const ts = decoded(false, d, p);
      expect(decoded(true, d, p)).toBe(ts);
      if (!ts.includes('|')) refused++;
    }
    // The two appended/truncated streams at least are refused (by the length check, or a corrupt value).
    expect(refused).toBeGreaterThanOrEqual(2);
  });
});
