/**
 * RGB ⇄ YCbCr, full range: the engine's one colour module. It holds two transforms with DIFFERENT
 * coefficients, both kept exactly as written because output files depend on them:
 *
 * 1. The JFIF table (`rgbToYcbcr`, `ycbcrToRgb`, `ycbcrToRgbSamples`; used by the compressor and the
 *    containers): the 6-decimal matrix printed in JPEG File Interchange Format 1.02 (E. Hamilton, C-Cube
 *    Microsystems, 1992), "Conversion to and from RGB": Y = 0.299R + 0.587G + 0.114B,
 *    Cb = −0.168736R − 0.331264G + 0.5B + 128, Cr = 0.5R − 0.418688G − 0.081312B + 128, and its printed
 *    inverse (1.402, 0.344136, 0.714136, 1.772). These are ITU-R BT.601 luma weights K_R = 0.299,
 *    K_B = 0.114 without the studio-range offsets. The chroma offset is half the sample range: 128 for
 *    8-bit (as JFIF states) and 32768 for 16-bit (our extension of JFIF, which defines only 8-bit).
 * 2. The closed form from K_R and K_B (`rgbToYcbcrBt601`, `ycbcrBt601ToRgb`, `NOISE_GAIN_YCBCR`; used by
 *    the cleaner): the same BT.601 weights (ITU-R Recommendation BT.601-7, 2011, §2.5.1–2.5.2: E'_Y =
 *    0.299 E'_R + 0.587 E'_G + 0.114 E'_B, chroma scaled by 0.5/(1 − K_B) and 0.5/(1 − K_R) — from memory)
 *    computed from K_R, K_B in float64 (planes stored as float32) instead of taken from the rounded table,
 *    so its inverse is exact to rounding. The forward coefficients differ from the table's by at most
 *    4.2e-7 (G of Cr: 0.5·0.587/0.701 = 0.4186876 vs 0.418688), the inverse's by at most 2.9e-7.
 */

/** Forward matrix rows Y, Cb, Cr: JFIF's printed 6-decimal values (from K_R = 0.299, K_B = 0.114). */
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

function chromaOffset(bitDepth: 8 | 16): number {
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

/**
 * Where decoded samples go: integer arrays (8-bit in Uint8Array, 16-bit in Uint16Array), or Float32Array
 * holding the same integers (the encoder's report compares them with the source's float planes).
 */
export type SampleOut = Uint8Array | Uint16Array | Float32Array;

/**
 * Math.round(x) clamped to [0, max] as an integer array stores it: NaN and −0 become +0 (which Uint8Array and
 * Uint16Array do by themselves), so a Float32Array output holds exactly the values an integer one would.
 */
function clampRound(x: number, max: number): number {
  const v = Math.round(x);
  return v > 0 ? (v > max ? max : v) : 0;
}

/** {@link toSamples} of `len` values of `plane` into `out` from `at`: the same rounding and clamping. */
export function roundInto(
  plane: ArrayLike<number>,
  len: number,
  max: number,
  out: SampleOut,
  at: number,
): void {
  for (let i = 0; i < len; i++) out[at + i] = clampRound(plane[i], max);
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
  outR: SampleOut,
  outG: SampleOut,
  outB: SampleOut,
  at: number,
): void {
  const off = chromaOffset(bitDepth);
  const max = bitDepth === 16 ? 65535 : 255;
  const [, m1, m2] = YCBCR_TO_RGB;
  const clamp = (x: number) => clampRound(x, max);
  for (let i = 0; i < len; i++) {
    const Y = y[i];
    const Cb = cb[i] - off;
    const Cr = cr[i] - off;
    outR[at + i] = clamp(Y + 1.402 * Cr);
    outG[at + i] = clamp(Y + m1[1] * Cb + m1[2] * Cr);
    outB[at + i] = clamp(Y + m2[1] * Cb);
  }
}

// 2. The closed-form BT.601 transform from K_R, K_B (the cleaner).

const KR = 0.299;
const KB = 0.114;
const KG = 1 - KR - KB;

/** How a unit of white noise in each of R, G, B (iid) scales into Y, Cb, Cr: the row norms of the matrix. */
export const NOISE_GAIN_YCBCR: readonly [number, number, number] = [
  Math.hypot(KR, KG, KB),
  Math.hypot((0.5 * KR) / (1 - KB), (0.5 * KG) / (1 - KB), 0.5),
  Math.hypot(0.5, (0.5 * KG) / (1 - KR), (0.5 * KB) / (1 - KR)),
];

/**
 * RGB planes → Y, Cb, Cr planes (float32) by the closed-form BT.601 matrix from K_R, K_B. `offset` is the
 * chroma offset (the cleaner passes (max + 1)/2: 128 for 8-bit, 32768 for 16-bit).
 */
export function rgbToYcbcrBt601(
  r: Float32Array,
  g: Float32Array,
  b: Float32Array,
  offset: number,
): Float32Array[] {
  const n = r.length;
  const Y = new Float32Array(n);
  const Cb = new Float32Array(n);
  const Cr = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    const y = KR * r[i] + KG * g[i] + KB * b[i];
    Y[i] = y;
    Cb[i] = (0.5 * (b[i] - y)) / (1 - KB) + offset;
    Cr[i] = (0.5 * (r[i] - y)) / (1 - KR) + offset;
  }
  return [Y, Cb, Cr];
}

/** Inverse of {@link rgbToYcbcrBt601}. */
export function ycbcrBt601ToRgb(
  Y: Float32Array,
  Cb: Float32Array,
  Cr: Float32Array,
  offset: number,
): Float32Array[] {
  const n = Y.length;
  const r = new Float32Array(n);
  const g = new Float32Array(n);
  const b = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    const y = Y[i];
    const cb = Cb[i] - offset;
    const cr = Cr[i] - offset;
    const rr = y + 2 * (1 - KR) * cr;
    const bb = y + 2 * (1 - KB) * cb;
    r[i] = rr;
    b[i] = bb;
    g[i] = (y - KR * rr - KB * bb) / KG;
  }
  return [r, g, b];
}
