// The codec's WebAssembly kernels (src-main/engine/codec/wasm/) against the TypeScript reference they replace:
// the 9/7 transform forward and inverse, the dead-zone quantiser, the reconstruction and the transform-domain
// squared error must give the same bits, on sizes with odd widths and heights, partial column strips, and
// single rows or columns (where the lifting does nothing along that side).
import { describe, expect, it } from 'vitest';
import { codecKernelsActive } from '../../src-main/engine/codec/wasm/runtime';
import {
  analysePlane,
  codedSquaredError,
  quantiseAnalysed,
  reconstructCoded,
} from '../../src-main/engine/codec/wavelet-plane';
import {
  forwardWavelet,
  forwardWaveletReference,
  inverseWavelet,
  levelsFor,
} from '../../src-main/engine/codec/wavelet-transform';
import { bothPaths, restoreKernelsAfterEach } from '../helpers/kernel-paths';
import { digest, rampPlane } from './plane-samples';

const plane = rampPlane;

restoreKernelsAfterEach();

const SIZES: Array<[number, number]> = [
  [1, 1],
  [1, 37],
  [53, 1],
  [2, 2],
  [13, 12],
  [33, 65],
  [101, 77],
  [64, 64],
  [300, 7],
  [257, 129],
];

describe('codec WebAssembly kernels give the TypeScript bits', () => {
  it('the kernels load in Node (so the comparisons below exercise them)', () => {
    expect(codecKernelsActive()).toBe(true);
  });

  it.each(SIZES)('%i×%i: forward and inverse 9/7 transform', (w, h) => {
    const src = Float64Array.from(plane(w, h, w * 31 + h));
    for (const levels of [1, 2, levelsFor(w, h), 6]) {
      const [ref, got] = bothPaths(() => {
        const x = Float64Array.from(src);
        forwardWavelet(x, w, h, levels);
        return x;
      });
      expect(digest(got)).toBe(digest(ref));
      // The column-by-column reference transform (no strips, no kernels) agrees too.
      const col = Float64Array.from(src);
      forwardWaveletReference(col, w, h, levels);
      expect(digest(got)).toBe(digest(col));
      const [iref, igot] = bothPaths(() => {
        const x = got.map((v) => Math.round(v / 3) * 3);
        inverseWavelet(x, w, h, levels);
        return x;
      });
      expect(digest(igot)).toBe(digest(iref));
    }
  });

  it.each(SIZES)('%i×%i: analyse, quantise, reconstruct and squared error', (w, h) => {
    const p = plane(w, h, w + 7 * h);
    const [aRef, aGot] = bothPaths(() => analysePlane(p, w, h));
    expect(digest(aGot.coeffs)).toBe(digest(aRef.coeffs));
    for (const step of [0.7, 4, 23]) {
      const [qRef, qGot] = bothPaths(() => quantiseAnalysed(aRef, step));
      expect(qGot.nonZero).toBe(qRef.nonZero);
      expect(digest(qGot.q)).toBe(digest(qRef.q));
      const coded = { ...qRef, bytes: new Uint8Array() };
      const [rRef, rGot] = bothPaths(() => reconstructCoded(aRef, coded));
      expect(digest(rGot)).toBe(digest(rRef));
      // Without offsets (coder 1's reconstruction) as well.
      const plain = { q: qRef.q, steps: qRef.steps };
      const [pRef, pGot] = bothPaths(() => reconstructCoded(aRef, { ...coded, offsets: undefined }));
      expect(digest(pGot)).toBe(digest(pRef));
      const [eRef, eGot] = bothPaths(() => codedSquaredError(aRef, qRef));
      expect(eGot).toBe(eRef);
      const [e1Ref, e1Got] = bothPaths(() => codedSquaredError(aRef, plain));
      expect(e1Got).toBe(e1Ref);
    }
  });

  it('a step far below the safe range wraps q as an Int32Array store does', () => {
    const w = 40;
    const h = 30;
    const a = analysePlane(plane(w, h, 5), w, h);
    for (const step of [1e-8, 1e-12, 3e-300]) {
      const [ref, got] = bothPaths(() => quantiseAnalysed(a, step));
      expect(got.nonZero).toBe(ref.nonZero);
      expect(digest(got.q)).toBe(digest(ref.q));
    }
  });
});
