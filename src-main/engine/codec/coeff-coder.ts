/**
 * Coefficient coder 2 of the wavelet plane coder (./wavelet-plane): the residual layer of container 1.3.
 * One routine ({@link codeCoefficients}) walks the coefficients for both directions, so the encoder and the
 * decoder form every context from the same already-coded values.
 *
 * - Order: the LL band, then HL, LH, HH from the coarsest level to the finest, each in raster order.
 * - LL: predicted from its coded neighbours by the median edge detector of LOCO-I (Weinberger, Seroussi,
 *   Sapiro, IEEE Trans. Image Process. 9(8):1309–1324, 2000, eq. 2), the difference coded as a signed
 *   integer on contexts from the neighbouring differences.
 * - Detail bands, significance: contexts from a weighted sum of already-coded neighbour magnitudes in the
 *   band (left, above ×2; diagonals, two to the left, two above ×1), separately from the parent (same
 *   orientation, next coarser level) and the co-located coefficients of the sibling bands already coded at
 *   this level (HL before LH before HH), per class of level and orientation. This is the neighbourhood of
 *   EBCOT's context formation (Taubman, IEEE Trans. Image Process. 9(7):1158–1170, 2000, §III; ISO/IEC
 *   15444-1 Annex D) with magnitude sums in place of significance counts (common practice, from memory).
 * - Signs: contexts from the signs of the left and upper neighbours, per orientation (Annex D's sign
 *   contexts use the same two neighbours and their signs; from memory).
 * - Magnitudes: the range coder's unary-then-Exp-Golomb bins, on contexts from the neighbour magnitudes.
 * - Reconstruction offsets: after the coefficients, per band, the mean position δ of the coded values
 *   inside their quantiser bins (in 1/32 of the band's step), one for |q| = 1 and one for |q| ≥ 2, for each
 *   that has at least {@link MIN_OFFSET_COUNT} values. The decoder rebuilds sign(q)·(|q| + δ)·Δ, the
 *   centroid of the bin's coefficients (Sullivan, IEEE Trans. Inf. Theory 42(5):1365–1374, 1996: for a
 *   Laplacian source the MSE-optimal reconstruction lies inside the bin, not at its edge).
 */
import * as rc from './range-coder';
import type { Band } from './wavelet-transform';

/** Significance contexts per class: 10 neighbourhood bins × 3 parent/sibling bins. */
const NB_BINS = 10;
const PS_BINS = 3;
/** Level group (1, 2, ≥3) × orientation class (HL/LH, HH). */
const CLASSES = 6;
const MAG_BINS = 6;
/** Least count of coded values in a band for it to carry a reconstruction offset. */
const MIN_OFFSET_COUNT = 8;
/** Reconstruction offsets are multiples of 1/unit of the step, within [min, max]. */
const OFFSET = { unit: 32, min: -16, max: 20 } as const;

/** Neighbourhood sum → bin: 0, 1, 2, 3, 4–5, 6–7, 8–11, 12–17, 18–29 (≥ 30: bin 9). */
const NB_LUT = Uint8Array.from({ length: 30 }, (_, s) =>
  s < 4 ? s : s < 6 ? 4 : s < 8 ? 5 : s < 12 ? 6 : s < 18 ? 7 : 8,
);

const sgn = (v: number) => (v > 0 ? 1 : v < 0 ? -1 : 0);

/** LL by MED prediction; `q` is read (encoder) or filled (decoder) in place. */
function codeLL(io: rc.BinaryCoder, q: Int32Array, width: number, b: Band): void {
  const m = new rc.IntModel(5);
  const d = new Int32Array(b.w * b.h);
  for (let y = 0; y < b.h; y++)
    for (let x = 0; x < b.w; x++) {
      const idx = (b.y0 + y) * width + b.x0 + x;
      const a = x > 0 ? q[idx - 1] : y > 0 ? q[idx - width] : 0;
      const u = y > 0 ? q[idx - width] : a;
      const c = x > 0 && y > 0 ? q[idx - width - 1] : u;
      const pred = c >= Math.max(a, u) ? Math.min(a, u) : c <= Math.min(a, u) ? Math.max(a, u) : a + u - c;
      const k = y * b.w + x;
      const act = (x > 0 ? Math.abs(d[k - 1]) : 0) + (y > 0 ? Math.abs(d[k - b.w]) : 0);
      const cls = act === 0 ? 0 : act <= 2 ? 1 : act <= 6 ? 2 : act <= 20 ? 3 : 4;
      const prevSign = x > 0 ? sgn(d[k - 1]) : 0;
      d[k] = io.int(m, q[idx] - pred, cls, prevSign);
      q[idx] = pred + d[k];
    }
}

function classOf(b: Band): number {
  return 2 * (b.level === 1 ? 0 : b.level === 2 ? 1 : 2) + (b.orient === 3 ? 1 : 0);
}

/**
 * Code every coefficient of `q` (Mallat layout, row stride `width`) in one direction: the encoder's io
 * writes the values of `q`; the decoder's io fills `q` (zeroed on entry).
 */
function codeCoefficients(io: rc.BinaryCoder, q: Int32Array, width: number, bands: Band[]): void {
  const zm = rc.contexts(CLASSES * NB_BINS * PS_BINS);
  const sm = rc.contexts(3 * 9);
  const mm = new rc.IntModel(3 * MAG_BINS);
  const byKey = new Map<string, Band>();
  for (const b of bands) byKey.set(`${b.orient}:${b.level}`, b);
  // min(|q|, 15) of every detail coefficient coded so far (the contexts only read coded positions: earlier
  // in the band's raster order, the parent band and the siblings coded before this band), 0 elsewhere.
  const mag = new Uint8Array(q.length);
  for (const b of bands) {
    if (b.orient === 0) {
      codeLL(io, q, width, b);
      continue;
    }
    const cls = classOf(b);
    const group = cls >> 1;
    const parent = byKey.get(`${b.orient}:${b.level + 1}`);
    const sibs = [1, 2]
      .filter((o) => o < b.orient)
      .map((o) => byKey.get(`${o}:${b.level}`))
      .filter((s): s is Band => s !== undefined);
    const [s1, s2] = sibs;
    const zBase = cls * NB_BINS;
    const sBase = (b.orient - 1) * 9;
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      const pRow = parent ? (parent.y0 + Math.min(parent.h - 1, y >> 1)) * width + parent.x0 : -1;
      const pLast = parent ? parent.w - 1 : 0;
      const s1Row = s1 && y < s1.h ? (s1.y0 + y) * width + s1.x0 : -1;
      const s2Row = s2 && y < s2.h ? (s2.y0 + y) * width + s2.x0 : -1;
      for (let x = 0; x < b.w; x++) {
        const idx = row + x;
        const l = x > 0 ? mag[idx - 1] : 0;
        const u = y > 0 ? mag[idx - width] : 0;
        let s = 2 * (l + u);
        if (y > 0) {
          if (x > 0) s += mag[idx - width - 1];
          if (x + 1 < b.w) s += mag[idx - width + 1];
        }
        if (x > 1) s += mag[idx - 2];
        if (y > 1) s += mag[idx - 2 * width];
        let ps = pRow >= 0 ? 2 * mag[pRow + (x >> 1 < pLast ? x >> 1 : pLast)] : 0;
        if (s1Row >= 0 && x < s1.w) ps += mag[s1Row + x];
        if (s2Row >= 0 && x < s2.w) ps += mag[s2Row + x];
        const pc = ps === 0 ? 0 : ps <= 2 ? 1 : 2;
        const v = q[idx];
        const z = io.bit(zm, (zBase + (s < 30 ? NB_LUT[s] : 9)) * PS_BINS + pc, v !== 0 ? 1 : 0);
        if (!z) continue;
        const left = x > 0 ? q[idx - 1] : 0;
        const up = y > 0 ? q[idx - width] : 0;
        const sc = (left > 0 ? 2 : left < 0 ? 0 : 1) * 3 + (up > 0 ? 2 : up < 0 ? 0 : 1);
        const neg = io.bit(sm, sBase + sc, v < 0 ? 1 : 0);
        const act = l + u + (ps >> 1);
        const mc = act === 0 ? 0 : act <= 1 ? 1 : act <= 3 ? 2 : act <= 6 ? 3 : act <= 12 ? 4 : 5;
        const a = io.magnitude(mm, Math.abs(v) - 1, group * MAG_BINS + mc) + 1;
        q[idx] = neg ? -a : a;
        mag[idx] = a > 15 ? 15 : a;
      }
    }
  }
}

/**
 * Per band b and bin class (|q| = 1, |q| ≥ 2): n[2b + class], the count of coded values, and, with `coeffs` and
 * `steps`, sum[2b + class] = Σ(|c|/Δ_b − |q|). Band by band in raster order, so each sum adds its terms in the
 * order of a raster walk over the whole plane, and zeros cost one test.
 */
function binStats(
  q: Int32Array,
  width: number,
  bands: Band[],
  coeffs?: Float64Array,
  steps?: Float64Array,
): { n: Int32Array; sum: Float64Array } {
  const n = new Int32Array(2 * bands.length);
  const sum = new Float64Array(2 * bands.length);
  for (let bi = 0; bi < bands.length; bi++) {
    const b = bands[bi];
    const d = steps ? steps[bi] : 1;
    let n1 = 0;
    let n2 = 0;
    let s1 = 0;
    let s2 = 0;
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      const end = row + b.w;
      for (let i = row; i < end; i++) {
        const v = q[i];
        if (v === 0) continue;
        const a = v < 0 ? -v : v;
        if (a === 1) {
          n1++;
          if (coeffs) s1 += Math.abs(coeffs[i]) / d - a;
        } else {
          n2++;
          if (coeffs) s2 += Math.abs(coeffs[i]) / d - a;
        }
      }
    }
    n[2 * bi] = n1;
    n[2 * bi + 1] = n2;
    sum[2 * bi] = s1;
    sum[2 * bi + 1] = s2;
  }
  return { n, sum };
}

/** Code the reconstruction offsets (units of 1/OFFSET.unit) of the bins with enough values. */
function codeOffsets(io: rc.BinaryCoder, k: Int32Array, counts: Int32Array): Float64Array {
  const m = new rc.IntModel(2);
  const out = new Float64Array(k.length);
  let prev = [0, 0];
  for (let j = 0; j < k.length; j++) {
    if (counts[j] < MIN_OFFSET_COUNT) continue;
    const c = j & 1;
    const v = prev[c] + io.int(m, k[j] - prev[c], c, 0);
    if (v < OFFSET.min || v > OFFSET.max) throw new RangeError('corrupt plane data (reconstruction offset)');
    prev = c ? [prev[0], v] : [v, prev[1]];
    out[j] = v / OFFSET.unit;
  }
  return out;
}

export interface CodedV2 {
  bytes: Uint8Array;
  /** Per band b: offsets[2b] for |q| = 1 and offsets[2b + 1] for |q| ≥ 2, in units of the band's step. */
  offsets: Float64Array;
}

/**
 * Range-code quantised coefficients `q` with coder 2. `coeffs` and `steps` (the unquantised coefficients
 * and each band's step) give the reconstruction offsets.
 */
export function encodeCoefficientsV2(
  q: Int32Array,
  coeffs: Float64Array,
  steps: Float64Array,
  width: number,
  bands: Band[],
): CodedV2 {
  const { counts, k } = offsetCodes(q, coeffs, steps, width, bands);
  const enc = new rc.RangeEncoder();
  const nonZero = counts.some((c) => c > 0);
  enc.encodeDirect(nonZero ? 1 : 0);
  let offsets: Float64Array = new Float64Array(2 * bands.length);
  if (nonZero) {
    // The encoder's io returns the value it wrote, so the walk writes back into q exactly what it read.
    codeCoefficients(enc, q, width, bands);
    offsets = codeOffsets(enc, k, counts);
  }
  return { bytes: enc.finish(), offsets };
}

/** Per band and bin class, the count of coded values and the offset code (units of 1/OFFSET.unit) coder 2 writes. */
function offsetCodes(
  q: Int32Array,
  coeffs: Float64Array,
  steps: Float64Array,
  width: number,
  bands: Band[],
): { counts: Int32Array; k: Int32Array } {
  const { n: counts, sum } = binStats(q, width, bands, coeffs, steps);
  const k = Int32Array.from(sum, (s, j) =>
    counts[j] ? Math.max(OFFSET.min, Math.min(OFFSET.max, Math.round((OFFSET.unit * s) / counts[j]))) : 0,
  );
  return { counts, k };
}

/**
 * The reconstruction offsets coder 2 would write for `q` (what {@link encodeCoefficientsV2} returns), without
 * range coding: for rate control, which needs the decoder's reconstruction but not the bytes.
 */
export function reconstructionOffsetsV2(
  q: Int32Array,
  coeffs: Float64Array,
  steps: Float64Array,
  width: number,
  bands: Band[],
): Float64Array {
  const { counts, k } = offsetCodes(q, coeffs, steps, width, bands);
  const out = new Float64Array(2 * bands.length);
  for (let j = 0; j < out.length; j++) if (counts[j] >= MIN_OFFSET_COUNT) out[j] = k[j] / OFFSET.unit;
  return out;
}

/**
 * Decode coder 2's coefficients into `q` (zeroed); returns the reconstruction offsets.
 * @throws RangeError if the bytes run out, are not all used or hold impossible values
 */
export function decodeCoefficientsV2(
  bytes: Uint8Array,
  q: Int32Array,
  width: number,
  bands: Band[],
): Float64Array {
  const dec = new rc.RangeDecoder(bytes);
  let offsets: Float64Array = new Float64Array(2 * bands.length);
  if (dec.decodeDirect() !== 0) {
    codeCoefficients(dec, q, width, bands);
    offsets = codeOffsets(dec, new Int32Array(2 * bands.length), binStats(q, width, bands).n);
  }
  dec.checkEnd('plane data');
  return offsets;
}
