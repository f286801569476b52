/**
 * Coefficient coder 1 of the wavelet plane coder (./wavelet-plane): the stack layout's coder and the residual
 * layer of container 1.2. Raster order band by band (coarse to fine); zero flags on contexts from the
 * significance of the left, upper and upper diagonal neighbours and the parent coefficient, per band class;
 * signs on one context per band class; magnitudes by the range coder's unary-then-Exp-Golomb binarisation.
 * Frozen: files of container 1.2 and stack files must decode bit-identically.
 */
import * as rc from './range-coder';
import type { Band } from './wavelet-transform';

const ZERO_CTX = 5 * 7 * 3;
const MAG_CTX = 5 * 4;
const SIGN_CTX = 5;

function bandClass(b: Band): number {
  if (b.orient === 0) return 0;
  const fine = b.level === 1 ? 2 : 0;
  return 1 + fine + (b.orient === 3 ? 1 : 0);
}

/** The coefficient of the parent band (same orientation, next coarser level), or 0. */
function parentOf(q: Int32Array, width: number, parent: Band | undefined, x: number, y: number): number {
  if (!parent) return 0;
  const px = Math.min(parent.w - 1, x >> 1);
  const py = Math.min(parent.h - 1, y >> 1);
  return q[(parent.y0 + py) * width + parent.x0 + px];
}

/** Visit every coefficient of every band in coding order, with its contexts. */
function walk(
  q: Int32Array,
  width: number,
  bands: Band[],
  visit: (idx: number, zctx: number, mctx: number, sctx: number, isLL: boolean) => void,
): void {
  const byKey = new Map<string, Band>();
  for (const b of bands) byKey.set(`${b.orient}:${b.level}`, b);
  for (const b of bands) {
    const bc = bandClass(b);
    const parent = b.orient === 0 ? undefined : byKey.get(`${b.orient}:${b.level + 1}`);
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      for (let x = 0; x < b.w; x++) {
        const idx = row + x;
        const left = x > 0 ? Math.abs(q[idx - 1]) : 0;
        const up = y > 0 ? Math.abs(q[idx - width]) : 0;
        const ul = x > 0 && y > 0 ? q[idx - width - 1] : 0;
        const ur = y > 0 && x + 1 < b.w ? q[idx - width + 1] : 0;
        const p = Math.abs(parentOf(q, width, parent, x, y));
        const sig =
          2 * (left !== 0 ? 1 : 0) + 2 * (up !== 0 ? 1 : 0) + (ul !== 0 ? 1 : 0) + (ur !== 0 ? 1 : 0);
        const pc = p === 0 ? 0 : p === 1 ? 1 : 2;
        const zctx = (bc * 7 + Math.min(sig, 6)) * 3 + pc;
        const m = left + up + (p > 0 ? 1 : 0);
        const mc = m === 0 ? 0 : m <= 2 ? 1 : m <= 6 ? 2 : 3;
        visit(idx, zctx, bc * 4 + mc, bc, b.orient === 0);
      }
    }
  }
}

/** Range-code quantised coefficients `q` (Mallat layout, row stride `width`) with coder 1. */
export function encodeCoefficientsV1(q: Int32Array, width: number, bands: Band[]): Uint8Array {
  let nonZero = 0;
  for (let i = 0; i < q.length; i++) if (q[i]) nonZero++;
  const enc = new rc.RangeEncoder();
  const zm = rc.models(ZERO_CTX);
  const mm = new rc.IntModel(MAG_CTX);
  const sm = rc.models(SIGN_CTX);
  // One leading flag: an all-zero plane costs a few bytes.
  enc.encodeDirect(nonZero ? 1 : 0);
  if (nonZero)
    walk(q, width, bands, (idx, zctx, mctx, sctx) => {
      const v = q[idx];
      enc.encodeBit(zm[zctx], v === 0 ? 0 : 1);
      if (v !== 0) {
        enc.encodeBit(sm[sctx], v < 0 ? 1 : 0);
        rc.encodeMagnitude(enc, mm, Math.abs(v) - 1, mctx);
      }
    });
  return enc.finish();
}

/**
 * Decode coder 1's coefficients into `q` (zeroed, width×height).
 * @throws RangeError if the bytes run out or are not all used
 */
export function decodeCoefficientsV1(bytes: Uint8Array, q: Int32Array, width: number, bands: Band[]): void {
  const dec = new rc.RangeDecoder(bytes);
  const zm = rc.models(ZERO_CTX);
  const mm = new rc.IntModel(MAG_CTX);
  const sm = rc.models(SIGN_CTX);
  if (dec.decodeDirect() !== 0)
    walk(q, width, bands, (idx, zctx, mctx, sctx) => {
      if (dec.decodeBit(zm[zctx]) === 0) return;
      const neg = dec.decodeBit(sm[sctx]);
      const a = rc.decodeMagnitude(dec, mm, mctx) + 1;
      q[idx] = neg ? -a : a;
    });
  // Exactly to the end of the coder's flush: fewer or more bytes mean damage or a header that does not fit.
  dec.checkEnd('plane data');
}
