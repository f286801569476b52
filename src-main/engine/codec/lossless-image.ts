/**
 * The coded planes of a lossless image file (container 1.5, docs/format.md "Lossless files"): grey is coded as
 * it is; colour goes through the reversible component transform of JPEG 2000 (ISO/IEC 15444-1 Annex G.2,
 * eq. G-5/G-6, from memory): Y = ⌊(R + 2G + B)/4⌋, U = B − G, V = R − G, and back G = Y − ⌊(U + V)/4⌋,
 * R = V + G, B = U + G. U and V span ±(2^depth − 1), so they are coded offset by 2^depth with one bit more.
 * Each plane goes through the exact plane coder (./lossless-coder); alpha keeps its own coder (./alpha).
 */
import {
  decodeExactPlane,
  type ExactPlaneShape,
  encodeExactPlane,
  estimateExactBytes,
} from './lossless-coder';

/** Header value of `colourTransform` in a lossless colour file. */
export const REVERSIBLE_TRANSFORM = 'rct';
/** Names of the coded planes (the header's `planes[k].name`). */
export const EXACT_GREY_NAMES = ['gray'];
export const EXACT_COLOUR_NAMES = ['Y', 'U', 'V'];

/** The shapes of the coded planes of a width × height image (1 plane for grey, 3 for colour). */
export function exactShapes(
  width: number,
  height: number,
  bitDepth: 8 | 16,
  colour: boolean,
): ExactPlaneShape[] {
  const energyShift = bitDepth - 8;
  const luma = { width, height, bits: bitDepth, energyShift };
  return colour ? [luma, { ...luma, bits: bitDepth + 1 }, { ...luma, bits: bitDepth + 1 }] : [luma];
}

/** The planes to code from the source's grey or R, G, B planes (integer samples as floats). */
export function exactPlanes(source: ArrayLike<number>[], bitDepth: 8 | 16, colour: boolean): Int32Array[] {
  if (!colour) return [Int32Array.from(source[0])];
  const [r, g, b] = source;
  const n = r.length;
  const off = 2 ** bitDepth;
  const y = new Int32Array(n);
  const u = new Int32Array(n);
  const v = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    const gi = g[i];
    y[i] = (r[i] + 2 * gi + b[i]) >> 2;
    u[i] = b[i] - gi + off;
    v[i] = r[i] - gi + off;
  }
  return [y, u, v];
}

/** The source's grey or R, G, B planes back from the coded planes, into `out` (one array per channel). */
export function sourceFromExact(
  planes: Int32Array[],
  bitDepth: 8 | 16,
  out: { [i: number]: number }[],
  n: number,
): void {
  if (planes.length === 1) {
    const p = planes[0];
    const o = out[0];
    for (let i = 0; i < n; i++) o[i] = p[i];
    return;
  }
  const [y, u, v] = planes;
  const off = 2 ** bitDepth;
  const max = off - 1;
  const [ro, go, bo] = out;
  for (let i = 0; i < n; i++) {
    const ui = u[i] - off;
    const vi = v[i] - off;
    const g = y[i] - ((ui + vi) >> 2);
    const r = vi + g;
    const b = ui + g;
    // Only a damaged stream leaves the sample range (the coder wraps values modulo its own range).
    if ((r | g | b) < 0 || r > max || g > max || b > max)
      throw new RangeError(`the colour planes decode to R, G, B = ${r}, ${g}, ${b}, outside 0–${max}`);
    ro[i] = r;
    go[i] = g;
    bo[i] = b;
  }
}

/** Code each plane. */
export function encodeExactPlanes(planes: Int32Array[], shapes: ExactPlaneShape[]): Uint8Array[] {
  return planes.map((p, k) => encodeExactPlane(p, shapes[k]));
}

/** Decode each plane (RangeError on a damaged stream). */
export function decodeExactPlanes(chunks: Uint8Array[], shapes: ExactPlaneShape[]): Int32Array[] {
  return chunks.map((c, k) => decodeExactPlane(c, shapes[k]));
}

/** The coded planes' total size estimated from a sample of about `samplePixels` pixels per plane. */
export function estimateExactTotal(
  planes: Int32Array[],
  shapes: ExactPlaneShape[],
  samplePixels: number,
): number {
  return planes.reduce((s, p, k) => s + estimateExactBytes(p, shapes[k], samplePixels), 0);
}
