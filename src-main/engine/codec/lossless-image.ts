/**
 * The coded planes of a lossless image file (container 1.5, docs/format.md "Lossless files"): grey is coded as
 * it is; colour goes through the reversible component transform of JPEG 2000 (ISO/IEC 15444-1 Annex G.2,
 * eq. G-5/G-6, from memory): Y = ⌊(R + 2G + B)/4⌋, U = B − G, V = R − G, and back G = Y − ⌊(U + V)/4⌋,
 * R = V + G, B = U + G. U and V span ±(2^depth − 1), so they are coded offset by 2^depth with one bit more.
 * Each plane goes through the exact plane coder (./lossless-coder); alpha keeps its own coder (./alpha).
 */
import { decodeExactPlane, type ExactPlaneShape, ExactSampler, encodeExactPlane } from './lossless-coder';

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

/** Rows per sampled strip of {@link estimateExactTotal}. */
const STRIP_ROWS = 4;

/**
 * The coded planes' total size, estimated from the coder run over evenly spread strips of about
 * `samplePixels` pixels (each strip with the source row above it, transformed here): only the sampled rows
 * are read, so a photograph's estimate costs about 1 % of an encode. Exact (the encoder's size) when the
 * sample covers the scan.
 */
export function estimateExactTotal(
  source: Float32Array[],
  width: number,
  height: number,
  bitDepth: 8 | 16,
  samplePixels: number,
): number {
  const colour = source.length >= 3;
  const shapes = exactShapes(width, height, bitDepth, colour);
  const strips = Math.ceil(samplePixels / (width * STRIP_ROWS));
  if (strips * STRIP_ROWS >= height)
    return encodeExactPlanes(exactPlanes(source, bitDepth, colour), shapes).reduce((s, b) => s + b.length, 0);
  const samplers = shapes.map((s) => new ExactSampler(s));
  const gap = height / strips;
  for (let s = 0; s < strips; s++) {
    const y0 = Math.floor(s * gap);
    const lo = Math.max(0, y0 - 1);
    const hi = Math.min(height, y0 + STRIP_ROWS);
    const rows = source.slice(0, colour ? 3 : 1).map((p) => p.subarray(lo * width, hi * width));
    exactPlanes(rows, bitDepth, colour).forEach((p, k) => {
      samplers[k].add(p, hi - lo, y0 - lo);
    });
  }
  return samplers.reduce((t, s) => t + s.estimate(), 0);
}

/**
 * A quick size figure for the lossless file, for rejecting scans far from a budget before the coder runs at
 * all: over `rows` evenly spread rows of each channel, the median edge detector's residuals (../lossless-coder)
 * each counted as the bits of their magnitude plus one, zeros as free. It runs as one plain loop (no model),
 * so it costs a fraction of a millisecond even before the JIT has compiled the coder. Bytes.
 */
export function roughExactBytes(
  source: ArrayLike<number>[],
  width: number,
  height: number,
  rows: number,
): number {
  if (height < 2) return 0;
  const step = Math.max(1, Math.floor((height - 1) / rows));
  let bits = 0;
  let counted = 0;
  for (const p of source)
    for (let y = 1; y < height; y += step) {
      counted++;
      for (let x = 1, i = y * width + 1; x < width; x++, i++) {
        const a = p[i - 1];
        const b = p[i - width];
        const c = p[i - width - 1];
        const mx = a > b ? a : b;
        const mn = a > b ? b : a;
        const e = Math.abs(p[i] - (c >= mx ? mn : c <= mn ? mx : a + b - c));
        if (e > 0) bits += 32 - Math.clz32(e);
      }
    }
  return (bits * source.length * (height - 1)) / (8 * counted);
}
