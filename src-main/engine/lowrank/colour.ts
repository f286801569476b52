/**
 * RGB ⇄ YCbCr, full range, with the JFIF 1.02 coefficients ("Conversion to and from RGB"), which are
 * ITU-R BT.601 luma weights K_R = 0.299, K_B = 0.114 without the studio-range offsets. The offset is
 * half the sample range: 128 for 8-bit (as JFIF states) and 32768 for 16-bit (our extension of JFIF,
 * which defines only 8-bit).
 */

/** Forward matrix rows Y, Cb, Cr (exact values from K_R = 0.299, K_B = 0.114). */
export const RGB_TO_YCBCR = [
  [0.299, 0.587, 0.114],
  [-0.168736, -0.331264, 0.5],
  [0.5, -0.418688, -0.081312],
] as const;

/** Inverse: R = Y + 1.402·Cr′, G = Y − 0.344136·Cb′ − 0.714136·Cr′, B = Y + 1.772·Cb′. */
export const YCBCR_TO_RGB = [
  [1, 0, 1.402],
  [1, -0.344136, -0.714136],
  [1, 1.772, 0],
] as const;

/**
 * Weight of each YCbCr plane's squared error in the RGB squared error, Σ_rows (inverse column)²,
 * assuming the planes' errors are uncorrelated: Y 3, Cb 3.2584, Cr 2.4756.
 */
export const YCBCR_ERROR_WEIGHTS: readonly number[] = [0, 1, 2].map((c) =>
  YCBCR_TO_RGB.reduce((s, row) => s + row[c] * row[c], 0),
);

export function chromaOffset(bitDepth: 8 | 16): number {
  return bitDepth === 16 ? 32768 : 128;
}

/** Convert R, G, B planes to Y, Cb, Cr planes (float64, unrounded). */
export function rgbToYcbcr(
  r: ArrayLike<number>,
  g: ArrayLike<number>,
  b: ArrayLike<number>,
  bitDepth: 8 | 16,
): Float64Array[] {
  const n = r.length;
  const off = chromaOffset(bitDepth);
  const y = new Float64Array(n);
  const cb = new Float64Array(n);
  const cr = new Float64Array(n);
  const [m0, m1, m2] = RGB_TO_YCBCR;
  for (let i = 0; i < n; i++) {
    const R = r[i];
    const G = g[i];
    const B = b[i];
    y[i] = m0[0] * R + m0[1] * G + m0[2] * B;
    cb[i] = m1[0] * R + m1[1] * G + m1[2] * B + off;
    cr[i] = m2[0] * R + m2[1] * G + m2[2] * B + off;
  }
  return [y, cb, cr];
}

/** Convert Y, Cb, Cr planes back to R, G, B (float64, unrounded). */
export function ycbcrToRgb(
  y: ArrayLike<number>,
  cb: ArrayLike<number>,
  cr: ArrayLike<number>,
  bitDepth: 8 | 16,
): Float64Array[] {
  const n = y.length;
  const off = chromaOffset(bitDepth);
  const r = new Float64Array(n);
  const g = new Float64Array(n);
  const b = new Float64Array(n);
  const [, m1, m2] = YCBCR_TO_RGB;
  for (let i = 0; i < n; i++) {
    const Y = y[i];
    const Cb = cb[i] - off;
    const Cr = cr[i] - off;
    r[i] = Y + 1.402 * Cr;
    g[i] = Y + m1[1] * Cb + m1[2] * Cr;
    b[i] = Y + m2[1] * Cb;
  }
  return [r, g, b];
}

/** Round to the nearest integer (halves up, as Math.round) and clamp to [0, max]. */
export function toSamples(plane: ArrayLike<number>, max: number): Float32Array {
  const out = new Float32Array(plane.length);
  for (let i = 0; i < plane.length; i++) {
    const v = Math.round(plane[i]);
    out[i] = v < 0 ? 0 : v > max ? max : v;
  }
  return out;
}

/** {@link toSamples} of `len` values of `plane` into `out` from `at`: the same rounding and clamping. */
export function roundInto(
  plane: ArrayLike<number>,
  len: number,
  max: number,
  out: Uint8Array | Uint16Array,
  at: number,
): void {
  for (let i = 0; i < len; i++) {
    const v = Math.round(plane[i]);
    out[at + i] = v < 0 ? 0 : v > max ? max : v;
  }
}

/**
 * {@link ycbcrToRgb} then {@link toSamples} for `len` values, written into R, G, B sample arrays from `at`.
 * The same expressions in the same order, so the samples equal the whole-plane path's.
 */
export function ycbcrToRgbSamples(
  y: ArrayLike<number>,
  cb: ArrayLike<number>,
  cr: ArrayLike<number>,
  len: number,
  bitDepth: 8 | 16,
  outR: Uint8Array | Uint16Array,
  outG: Uint8Array | Uint16Array,
  outB: Uint8Array | Uint16Array,
  at: number,
): void {
  const off = chromaOffset(bitDepth);
  const max = bitDepth === 16 ? 65535 : 255;
  const [, m1, m2] = YCBCR_TO_RGB;
  const clamp = (x: number) => {
    const v = Math.round(x);
    return v < 0 ? 0 : v > max ? max : v;
  };
  for (let i = 0; i < len; i++) {
    const Y = y[i];
    const Cb = cb[i] - off;
    const Cr = cr[i] - off;
    outR[at + i] = clamp(Y + 1.402 * Cr);
    outG[at + i] = clamp(Y + m1[1] * Cb + m1[2] * Cr);
    outB[at + i] = clamp(Y + m2[1] * Cb);
  }
}
