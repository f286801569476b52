// Planes resident in their own WebAssembly memory (src-main/engine/codec/wasm/arena.ts, ../resident-plane.ts)
// against the TypeScript reference (kernels and coder port off) and the shared, copying kernels: analysis,
// quantisation, coding, squared error, safe step, reconstruction and decoding give the same bits on every
// path, for f32 and f64 input, odd sizes, single rows and columns, and after the coder grows the memory.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { residentArena } from '../../src-main/engine/codec/resident-plane';
import { ARENA_MIN_PIXELS, setArenaMinPixels } from '../../src-main/engine/codec/wasm/arena';
import {
  type AnalysedPlane,
  analysePlane,
  codeAnalysed,
  codedSquaredError,
  decodePlane,
  quantiseAnalysed,
  reconstructCoded,
  smallestSafeStep,
} from '../../src-main/engine/codec/wavelet-plane';
import { digest, rampPlane, reference } from './plane-samples';

const plane = rampPlane;

/** Everything the plane coder computes from one plane, as digests and numbers. */
function run(p: ArrayLike<number>, w: number, h: number, steps: number[]) {
  const a: AnalysedPlane = analysePlane(p, w, h);
  const out: unknown[] = [digest(a.coeffs), smallestSafeStep(a)];
  const coded = steps.map((s) => codeAnalysed(a, s, 2));
  for (const c of coded) {
    // The last code is resident; the earlier ones take the copying paths.
    out.push(digest(c.bytes), digest(c.q), digest(c.offsets as Float64Array), c.nonZero);
    out.push(codedSquaredError(a, c), digest(reconstructCoded(a, c)));
    out.push(digest(decodePlane(c.bytes, w, h, steps[coded.indexOf(c)], 2)));
  }
  const qa = quantiseAnalysed(a, steps[0] * 1.5);
  out.push(digest(qa.q), digest(qa.offsets as Float64Array), codedSquaredError(a, qa));
  out.push(digest(reconstructCoded(a, { ...qa, bytes: new Uint8Array() })));
  out.push(codedSquaredError(a, coded[0]), digest(a.coeffs), digest(a.map));
  return out;
}

const SIZES: Array<[number, number]> = [
  [1, 37],
  [53, 1],
  [13, 12],
  [101, 77],
  [257, 129],
];

describe('planes resident in their own WebAssembly memory', () => {
  beforeAll(() => setArenaMinPixels(1));
  afterAll(() => setArenaMinPixels(ARENA_MIN_PIXELS));

  it.each(SIZES)('%i×%i: the same bits as the TypeScript and the shared kernels', (w, h) => {
    const f32 = plane(w, h, 3 * w + h);
    const f64 = Float64Array.from(f32);
    const steps = [0.9, 6, 21];
    const ref = reference(() => run(f32, w, h, steps));
    expect(run(f32, w, h, steps)).toEqual(ref);
    expect(run(f64, w, h, steps)).toEqual(ref);
    expect(run(Array.from(f32), w, h, steps)).toEqual(ref);
    setArenaMinPixels(Number.POSITIVE_INFINITY);
    try {
      expect(run(f32, w, h, steps)).toEqual(ref);
    } finally {
      setArenaMinPixels(1);
    }
  });

  it('a reconstruction handed out stays intact through later codes and reconstructions of its plane', () => {
    const w = 96;
    const h = 80;
    const p = plane(w, h, 21);
    const ref = reference(() => {
      const a = analysePlane(p, w, h);
      return [5, 9, 2].map((s) => digest(reconstructCoded(a, codeAnalysed(a, s, 2))));
    });
    const a = analysePlane(p, w, h);
    const first = reconstructCoded(a, codeAnalysed(a, 5, 2));
    const kept = digest(first);
    const later = [9, 2].map((s) => digest(reconstructCoded(a, codeAnalysed(a, s, 2))));
    expect([kept, ...later]).toEqual(ref);
    expect(digest(first)).toBe(kept);
  });

  it('keeps the q of earlier results, also where a step far below the safe range wraps magnitudes to 0', () => {
    const w = 40;
    const h = 30;
    const p = plane(w, h, 5);
    const steps = [1e-12, 3e-300, 4, 1e-8];
    const all = () => {
      const a = analysePlane(p, w, h);
      const got = steps.map((s) => quantiseAnalysed(a, s));
      codeAnalysed(a, 2, 2); // reuses the q region once more
      return got.map((g) => [g.nonZero, digest(g.q), codedSquaredError(a, g)]);
    };
    expect(all()).toEqual(reference(all));
  });

  it('keeps its coefficients readable after its memory grows (as the coder grows it for a long output)', () => {
    const w = 64;
    const h = 48;
    const p = plane(w, h, 11);
    const ref = reference(() => {
      const a = analysePlane(p, w, h);
      const c = codeAnalysed(a, 3, 2);
      return [digest(a.coeffs), digest(c.bytes), digest(reconstructCoded(a, c))];
    });
    const a = analysePlane(p, w, h);
    const arena = residentArena(a);
    expect(arena).toBeDefined();
    const before = a.coeffs;
    arena?.memory.grow(1);
    // A plain memory's old view is detached by the growth, a shared one's (./arena-split.test.ts) keeps its
    // length; either way the plane hands out a fresh view of the grown memory.
    expect(before.length === 0 || before.buffer instanceof SharedArrayBuffer).toBe(true);
    expect(a.coeffs.buffer).toBe(arena?.memory.buffer);
    const c = codeAnalysed(a, 3, 2);
    expect([digest(a.coeffs), digest(c.bytes), digest(reconstructCoded(a, c))]).toEqual(ref);
  });
});
