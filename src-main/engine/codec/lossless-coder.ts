/**
 * The exact (lossless) plane coder of the image layout's lossless files (./lossless-image): every sample is
 * predicted from its causal neighbours and the prediction residual is range-coded (./range-coder) with
 * adaptive binary contexts. Our own layout; the ideas and where they come from:
 *
 *  - Prediction by the median edge detector of LOCO-I / JPEG-LS (Weinberger, Seroussi, Sapiro, IEEE TIP 9(8),
 *    2000, eq. (2), from memory). That paper's per-context bias cancellation (§III-B) was tried and left out:
 *    with adaptive sign contexts it made files larger here (phantom 1139 → 4421 B, moon 36 779 → 57 915 B).
 *  - Residuals reduced modulo the sample range, so they take no more than the sample's bits (same paper,
 *    §III-C, from memory).
 *  - The coding context is the local error energy: the summed absolute neighbour gradients plus twice the
 *    previous residual's magnitude, quantised on a roughly logarithmic scale (the Δ estimator of CALIC: Wu &
 *    Memon, IEEE Trans. Commun. 45(4), 1997, §III, from memory).
 *  - A binary "residual is zero" decision whose context adds how many of the west and north residuals were
 *    zero: in flat areas it codes each sample in a small fraction of a bit (common practice in binary
 *    arithmetic coders, e.g. CABAC's significance flags: Marpe, Schwarz, Wiegand, IEEE TCSVT 13(7), 2003).
 *  - Magnitudes binarised as the unary length of an Elias-gamma code (each bin its own adaptive context per
 *    energy class), the leading mantissa bit modelled per class and length, the lower bits per length and
 *    position (our choice; Elias, IEEE Trans. Inf. Theory 21(2), 1975 for the code).
 *
 * One routine walks the samples for both directions ({@link BinaryCoder}), so encoder and decoder cannot
 * disagree on a context.
 */
import { type BinaryCoder, type Contexts, contexts, RangeDecoder, RangeEncoder } from './range-coder';

/** Energy classes: thresholds of the quantised error energy (upper bounds, exclusive). Part of the format. */
const ENERGY_LIMITS = Int32Array.from([1, 2, 3, 5, 7, 10, 14, 19, 26, 36, 50, 70, 100, 140, 200, 300]);
const CLASSES = ENERGY_LIMITS.length + 1;
/** Texture patterns per class for the sign: the signs of W − NW and N − NW (3 × 3). */
const TEXTURES = 9;
/** Longest Elias-gamma length: residuals are below 2^17 (16-bit chroma after the colour transform). */
const MAX_LENGTH = 18;
/** Energy lookup: energies below this index the table; larger ones take the top class. */
const ENERGY_TABLE = 512;
const ENERGY_CLASS = (() => {
  const t = new Uint8Array(ENERGY_TABLE);
  for (let e = 0, c = 0; e < ENERGY_TABLE; e++) {
    while (c < ENERGY_LIMITS.length && e >= ENERGY_LIMITS[c]) c++;
    t[e] = c;
  }
  return t;
})();

/** One plane's coding: its size, the modulus of its samples (a power of 2) and the energy's scale shift. */
export interface ExactPlaneShape {
  width: number;
  height: number;
  /** Samples lie in [0, 2^bits). */
  bits: number;
  /** The error energy is shifted right by this before it is classed (bit depth − 8: 16-bit scans use 8). */
  energyShift: number;
}

/** The adaptive state of one plane's coder. */
class ExactModel {
  readonly zero = contexts(CLASSES * 3);
  readonly sign = contexts(CLASSES * TEXTURES);
  readonly length = contexts(CLASSES * MAX_LENGTH);
  readonly lead = contexts(CLASSES * MAX_LENGTH);
  readonly low: Contexts = contexts(MAX_LENGTH * MAX_LENGTH);
}

/** Sign of x as 0, 1, 2 (negative, zero, positive). */
const sign3 = (x: number) => (x > 0 ? 2 : x < 0 ? 0 : 1);

/**
 * Walk rows [y0, y1) of `plane` (row-major, `width` wide), coding each residual through `coder`. The encoder
 * passes the source (read only); the decoder passes a zeroed plane that it fills. Rows before y0 are read as
 * they are (the estimator codes strips of a source). The row above row 0 and the column left of column 0
 * follow the JPEG-LS convention (same paper §III-A, from memory): above row 0 is zero, left of column 0 is the
 * sample above, and right of the last column repeats the last sample above.
 */
function walk(
  coder: BinaryCoder,
  m: ExactModel,
  plane: Int32Array,
  shape: ExactPlaneShape,
  y0: number,
  y1: number,
): void {
  const { width, bits, energyShift } = shape;
  const mod = 2 ** bits;
  const mask = mod - 1;
  const half = mod / 2;
  // Magnitudes of the residuals of the row above and of this row (index x + 1; 0 at the borders).
  let above = new Int32Array(width + 2);
  let here = new Int32Array(width + 2);
  const { zero, sign, length, lead, low } = m;
  const encoding = coder instanceof RangeEncoder;
  for (let y = y0; y < y1; y++) {
    const row = y * width;
    const up = row - width;
    for (let x = 0; x < width; x++) {
      const i = row + x;
      const b = y > 0 ? plane[up + x] : 0;
      const c = y > 0 && x > 0 ? plane[up + x - 1] : b;
      const a = x > 0 ? plane[i - 1] : b;
      const d = y > 0 && x + 1 < width ? plane[up + x + 1] : b;
      const mx = a > b ? a : b;
      const mn = a > b ? b : a;
      const pred = c >= mx ? mn : c <= mn ? mx : a + b - c;
      const eW = here[x];
      const grad = Math.abs(a - c) + Math.abs(b - c) + Math.abs(d - b) + 2 * eW;
      const g = grad >> energyShift;
      const cls = g < ENERGY_TABLE ? ENERGY_CLASS[g] : CLASSES - 1;
      const sc = cls * TEXTURES + sign3(a - c) * 3 + sign3(b - c);
      // The residual modulo 2^bits, in [−2^(bits−1), 2^(bits−1)).
      let e = 0;
      if (encoding) {
        e = (plane[i] - pred) & mask;
        if (e >= half) e -= mod;
      }
      const zc = cls * 3 + (eW === 0 ? 1 : 0) + (above[x + 1] === 0 ? 1 : 0);
      let mag = 0;
      if (coder.bit(zero, zc, e === 0 ? 0 : 1)) {
        const neg = coder.bit(sign, sc, e < 0 ? 1 : 0);
        mag = codeMagnitude(coder, length, lead, low, cls, e < 0 ? -e : e);
        e = neg ? -mag : mag;
      }
      if (!encoding) plane[i] = (pred + e) & mask;
      here[x + 1] = mag;
    }
    const t = above;
    above = here;
    here = t;
    here.fill(0);
  }
}

/** A magnitude v ≥ 1: v's Elias-gamma length in unary, its leading mantissa bit, then the lower bits. */
function codeMagnitude(
  coder: BinaryCoder,
  length: Contexts,
  lead: Contexts,
  low: Contexts,
  cls: number,
  v: number,
): number {
  const n = 31 - Math.clz32(v); // v in [2^n, 2^(n+1)) when encoding
  const lb = cls * MAX_LENGTH;
  let k = 0;
  while (k < MAX_LENGTH - 1 && coder.bit(length, lb + k, k < n ? 1 : 0)) k++;
  if (k === 0) return 1;
  let r = 1;
  for (let p = k - 1; p >= 0; p--) {
    const bit = (v >>> p) & 1;
    r = 2 * r + (p === k - 1 ? coder.bit(lead, lb + k, bit) : coder.bit(low, k * MAX_LENGTH + p, bit));
  }
  return r;
}

/** Code a plane of integer samples in [0, 2^bits) exactly. */
export function encodeExactPlane(plane: Int32Array, shape: ExactPlaneShape): Uint8Array {
  const enc = new RangeEncoder();
  walk(enc, new ExactModel(), plane, shape, 0, shape.height);
  return enc.finish();
}

/**
 * Decode a plane coded by {@link encodeExactPlane}.
 * @throws RangeError when the stream ends early or has unused bytes (damaged, or the header does not match)
 */
export function decodeExactPlane(bytes: Uint8Array, shape: ExactPlaneShape): Int32Array {
  const dec = new RangeDecoder(bytes);
  const out = new Int32Array(shape.width * shape.height);
  walk(dec, new ExactModel(), out, shape, 0, shape.height);
  dec.checkEnd('the exact plane');
  return out;
}

/**
 * The coder run over sampled strips of a plane, for a size estimate (../lowrank/lossless-choice): the models
 * adapt across strips as they would over the whole plane, and the output is scaled by the rows coded.
 */
export class ExactSampler {
  private readonly enc = new RangeEncoder();
  private readonly model = new ExactModel();
  private rows = 0;
  constructor(private readonly shape: ExactPlaneShape) {}

  /**
   * Code rows [from, rows) of `strip`, a piece of the plane `rows` rows high whose rows before `from` are
   * read as the rows above (from is 0 for a strip at the top of the plane, 1 otherwise).
   */
  add(strip: Int32Array, rows: number, from: number): void {
    walk(this.enc, this.model, strip, { ...this.shape, height: rows }, from, rows);
    this.rows += rows - from;
  }

  /** The plane's coded size scaled from the strips coded so far (finishes the stream: call once). */
  estimate(): number {
    return Math.ceil((this.enc.finish().length * this.shape.height) / Math.max(1, this.rows));
  }
}
