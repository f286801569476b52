// The strip-wise column pass of the 9/7 transform (src-main/engine/codec/wavelet-transform.ts) must give the
// same bits as the column-by-column lifting it replaces, forward and inverse, on sizes that leave partial strips.
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
  forwardWavelet,
  forwardWaveletReference,
  inverseWavelet,
} from '../../src-main/engine/codec/wavelet-transform';

/** A deterministic test plane: a linear congruential sequence (Numerical Recipes constants) plus a ripple. */
function plane(w: number, h: number, seed: number): Float64Array {
  let a = seed >>> 0;
  const x = new Float64Array(w * h);
  for (let i = 0; i < x.length; i++) {
    a = (Math.imul(a, 1664525) + 1013904223) >>> 0;
    x[i] = (a / 2 ** 32) * 255 + Math.sin(i / 7) * 40;
  }
  return x;
}

const digest = (x: Float64Array) =>
  createHash('sha256').update(new Uint8Array(x.buffer)).digest('hex').slice(0, 16);

// Digests recorded with the whole-plane row-wise column pass of commit 8167d92 (before strips), on the same
// planes: forward coefficients, then the inverse of the coefficients rounded to multiples of 3.
const RECORDED: Array<[number, number, number, string, string]> = [
  [101, 77, 3, 'e246efceafe80a0a', '615d118f413fc00a'],
  [300, 7, 1, 'abcaa539cf279963', '49250f809602efa3'],
  [65, 200, 4, 'af31faeda7b997d6', 'ee483003ff2f5f8c'],
];

describe('9/7 transform in column strips', () => {
  it.each(RECORDED)('%i×%i, %i levels: forward and inverse give the recorded bits', (w, h, l, fwd, inv) => {
    const x = plane(w, h, w * h);
    const ref = Float64Array.from(x);
    forwardWavelet(x, w, h, l);
    forwardWaveletReference(ref, w, h, l);
    expect(digest(x)).toBe(digest(ref));
    expect(digest(x)).toBe(fwd);
    for (let i = 0; i < x.length; i++) x[i] = Math.round(x[i] / 3) * 3;
    inverseWavelet(x, w, h, l);
    expect(digest(x)).toBe(inv);
  });
});
