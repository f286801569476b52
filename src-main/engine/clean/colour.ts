/**
 * Full-range YCbCr (JFIF) for denoising colour scans as luma + chroma.
 *
 * Reference: JPEG File Interchange Format 1.02 (E. Hamilton, C-Cube Microsystems, 1992), "Conversion to
 * and from RGB": Y = 0.299R + 0.587G + 0.114B, Cb = −0.1687R − 0.3313G + 0.5B + 128,
 * Cr = 0.5R − 0.4187G − 0.0813B + 128. The exact coefficients follow from K_R = 0.299, K_B = 0.114
 * (ITU-R BT.601); they are used here so the inverse is exact to rounding.
 */
const KR = 0.299;
const KB = 0.114;
const KG = 1 - KR - KB;

/** How a unit of white noise in each of R, G, B (iid) scales into Y, Cb, Cr: the row norms of the matrix. */
export const NOISE_GAIN_YCBCR: readonly [number, number, number] = [
  Math.hypot(KR, KG, KB),
  Math.hypot((0.5 * KR) / (1 - KB), (0.5 * KG) / (1 - KB), 0.5),
  Math.hypot(0.5, (0.5 * KG) / (1 - KR), (0.5 * KB) / (1 - KR)),
];

/** RGB planes → Y, Cb, Cr planes. `offset` is the chroma offset (128 for 8-bit, 32768 for 16-bit). */
export function rgbToYcbcr(
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

/** Inverse of {@link rgbToYcbcr}. */
export function ycbcrToRgb(
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
