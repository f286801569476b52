// The report's decode of a grey residual-only file in one kernel pass (src-main/engine/codec/resident-rows.ts,
// through src-main/engine/lowrank/band-sums.ts): where the residual plane is a resident hand-out, the decoded
// samples (base + residual, Math.round, clamped to 0 … max) and both sums of squared errors must equal the
// TypeScript's (the rounding and clamping of decode-image's greyFlatInto, then SquaredErrors.add) bit for bit,
// for bands of any length (odd, longer than the kernel's scratch, across the 4096-sample blocks), at 8 and 16
// bits, on rounding's edge cases (halves, the double just below ½, negatives, values past max, NaN). A residual
// not resident is left to the TypeScript. A residual-only encode of a large scan reports the whole-plane
// figures of its decoded file.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { forgetCodes, recordingCodes } from '../../src-main/engine/codec/coded-planes';
import { giveBackWork, handOutArena } from '../../src-main/engine/codec/resident-plane';
import { ARENA_MIN_PIXELS, setArenaMinPixels } from '../../src-main/engine/codec/wasm/arena';
import { analysePlane, codeAnalysed, decodePlane } from '../../src-main/engine/codec/wavelet-plane';
import { initEngine } from '../../src-main/engine/linalg';
import { Rng } from '../../src-main/engine/linalg/random';
import { SquaredErrors } from '../../src-main/engine/lowrank/band-sums';
import { decodeImageFile } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { runHere } from '../../src-main/engine/lowrank/side-jobs';
import { psnrPlanes, ssim } from '../../src-main/engine/metrics';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { field, greyScan } from './noisy-field';

beforeAll(async () => {
  await initEngine();
});

/** decode-image's greyFlatInto: out[i] = clamp(round(base + x[at + i])) to 0 … max (NaN and −0 to 0). */
function flatInto(base: number, x: Float64Array, at: number, len: number, max: number, out: Float32Array) {
  for (let i = 0; i < len; i++) {
    const v = Math.round(base + x[at + i]);
    out[i] = v > 0 ? (v > max ? max : v) : 0;
  }
}

/** Residual values whose sum with `base` sits on rounding's edges, then seeded noise. */
function edgy(base: number, max: number, n: number, seed: number): number[] {
  const rng = new Rng(seed);
  const edges = [0.5, 1.5, 2.5, -0.5, -1.5, 0.49999999999999994, -0.49999999999999994, 0, -0.2, -7];
  const at = edges.flatMap((e) => [e - base, e + 100.5 - base]);
  at.push(max + 0.5 - base, max - 0.5 - base, max + 3 - base, Number.NaN, -base - 1e-300, 1e300);
  return Array.from({ length: n }, (_, i) => (i < at.length ? at[i] : (max / 3) * rng.normal()));
}

const fields = (s: SquaredErrors) => [s.running, s.sum, s.block, s.inBlock, s.same];

describe('a grey residual band decoded and measured in one kernel pass', () => {
  beforeAll(() => setArenaMinPixels(1));
  afterAll(() => setArenaMinPixels(ARENA_MIN_PIXELS));

  it.each([
    [8, 0.37],
    [16, 0.5],
  ] as const)(
    '%i-bit: the samples and both sums of the TypeScript, bit for bit, band after band',
    (bits, frac) => {
      const [w, h] = [131, 97];
      const n = w * h;
      const max = bits === 16 ? 65535 : 255;
      const base = Math.round(max * 0.4) + frac;
      forgetCodes();
      const coded = recordingCodes(() => codeAnalysed(analysePlane(field(w, h, 3, max), w, h), max / 60, 2));
      // The decode of bytes just coded is rebuilt in the plane's arena and handed out (the report's path).
      const x = decodePlane(coded.bytes, w, h, max / 60, 2);
      forgetCodes();
      expect(handOutArena(x)).toBeDefined();
      x.set(edgy(base, max, n, 5));
      const source = field(w, h, 4, max);
      source[7] = 0.25;
      // Bands: odd lengths, one longer than the kernel's scratch (about 3400 samples here), across blocks.
      const cuts = [0, 1, 38, 3 * w + 5, 4096, 4097, 40 * w + 1, n];
      const want = new SquaredErrors(source);
      const got = new SquaredErrors(source);
      const a = new Float32Array(n);
      const b = new Float32Array(n);
      for (let k = 0; k + 1 < cuts.length; k++) {
        const [at, len] = [cuts[k], cuts[k + 1] - cuts[k]];
        flatInto(base, x, at, len, max, a);
        want.add(a, at, len);
        expect(got.addFlatResident(x, base, at, len, max, b, 0)).toBe(true);
        for (let i = 0; i < len; i++)
          if (!Object.is(a[i], b[i])) expect([at + i, b[i]]).toEqual([at + i, a[i]]);
        expect(fields(got)).toEqual(fields(want));
        expect(fields(got).every((v, j) => Object.is(v, fields(want)[j]))).toBe(true);
      }
      expect(got.same).toBe(false);
      expect(got.running).toBeGreaterThan(0);
      expect(Object.is(got.blocked(), want.blocked())).toBe(true);

      // A source equal to the decoded samples: nothing differs.
      flatInto(base, x, 0, n, max, a);
      const exact = new SquaredErrors(a.slice());
      expect(exact.addFlatResident(x, base, 0, n, max, b, 0)).toBe(true);
      expect(fields(exact)).toEqual([0, 0, 0, n % 4096, true]);

      // Not resident (a copy, or the hand-out given back): nothing done, for the TypeScript to do.
      const none = new SquaredErrors(source);
      expect(none.addFlatResident(x.slice(), base, 0, n, max, b, 0)).toBe(false);
      giveBackWork(x);
      expect(none.addFlatResident(x, base, 0, n, max, b, 0)).toBe(false);
      expect(fields(none)).toEqual([0, 0, 0, 0, true]);
    },
  );
});

describe('the residual-only encode of a large grey scan', () => {
  it('reports the PSNR and SSIM of its decoded file, bit for bit', () => {
    const [w, h] = [1320, 1260];
    const img = greyScan(w, h, 8, false);
    const later = ((name, args) => () => runHere(name, args)()) as typeof runHere;
    const r = encodeScan(img, {
      budget: { kind: 'bpp', bpp: 0.5 },
      tile: 'auto',
      compressors: COMPRESSORS,
      layers: 'auto',
      side: later,
    });
    expect(r.layers?.chosen).toBe('residual-only');
    forgetCodes();
    const decoded = decodeImageFile(r.bytes, img.file).samples[0];
    expect(Object.is(r.psnr, psnrPlanes([img.planes[0]], [decoded], 255))).toBe(true);
    expect(Object.is(r.ssim, ssim(img.planes[0], decoded, w, h, 255))).toBe(true);
  });
});
