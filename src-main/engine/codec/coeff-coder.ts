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
import {
  BAND_FIELDS,
  CLASSES,
  ERR_EG_PREFIX,
  ERR_MAGNITUDE_RANGE,
  ERR_OFFSET,
  LL_CLASSES,
  MAG_BINS,
  MAX_BANDS,
  MIN_OFFSET_COUNT,
  NB_BINS,
  NB_SUMS,
  OFFSET_MAX,
  OFFSET_MIN,
  OFFSET_UNIT,
  PS_BINS,
  SIGN_CONTEXTS,
} from './wasm/coder-constants';
import { type CoderSetup, coderWasm, decodeWasm, encodeWasm } from './wasm/coder-runtime';
import type { Band } from './wavelet-transform';

/** Neighbourhood sum → bin: 0, 1, 2, 3, 4–5, 6–7, 8–11, 12–17, 18–29 (≥ NB_SUMS = 30: bin 9). */
const NB_LUT = Uint8Array.from({ length: NB_SUMS }, (_, s) =>
  s < 4 ? s : s < 6 ? 4 : s < 8 ? 5 : s < 12 ? 6 : s < 18 ? 7 : 8,
);

const OFFSET_MESSAGE = 'corrupt plane data (reconstruction offset)';

/** What the WebAssembly port of this coder (./wasm/assembly/coder.ts) needs (here and in ./coeff-coder-resident). */
export const SETUP: CoderSetup = {
  recipFast: rc.RECIP_FAST,
  recipSlow: rc.RECIP_SLOW,
  nbLut: NB_LUT,
  fail(code: number, value: number): never {
    if (code === ERR_MAGNITUDE_RANGE) throw new RangeError(rc.magnitudeRangeMessage(value));
    if (code === ERR_EG_PREFIX) throw new RangeError(rc.EG_PREFIX_MESSAGE);
    if (code === ERR_OFFSET) throw new RangeError(OFFSET_MESSAGE);
    throw new RangeError('the plane is too large for the WebAssembly memory of the coefficient coder');
  },
};

const sgn = (v: number) => (v > 0 ? 1 : v < 0 ? -1 : 0);

/** LL by MED prediction; `q` is read (encoder) or filled (decoder) in place. */
function codeLL(io: rc.BinaryCoder, q: Int32Array, width: number, b: Band): void {
  const m = new rc.IntModel(LL_CLASSES);
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
 * The band table both forms of the coder walk: per band, BAND_FIELDS integers — x0, y0, w, h, orientation,
 * context class, and the indices of its parent (same orientation, next coarser level) and of the sibling
 * bands of its level coded before it (HL before LH before HH), −1 where there is none.
 */
export function bandTable(bands: Band[]): Int32Array {
  const t = new Int32Array(BAND_FIELDS * bands.length);
  const at = (orient: number, level: number) =>
    bands.findIndex((b) => b.orient === orient && b.level === level);
  bands.forEach((b, bi) => {
    const sibs = [1, 2]
      .filter((o) => o < b.orient)
      .map((o) => at(o, b.level))
      .filter((i) => i >= 0);
    const parent = b.orient === 0 ? -1 : at(b.orient, b.level + 1);
    t.set(
      [b.x0, b.y0, b.w, b.h, b.orient, classOf(b), parent, sibs[0] ?? -1, sibs[1] ?? -1],
      BAND_FIELDS * bi,
    );
  });
  return t;
}

/**
 * Code every coefficient of `q` (Mallat layout, row stride `width`) in one direction: the encoder's io
 * writes the values of `q`; the decoder's io fills `q` (zeroed on entry).
 */
function codeCoefficients(io: rc.BinaryCoder, q: Int32Array, width: number, bands: Band[]): void {
  const zm = rc.contexts(CLASSES * NB_BINS * PS_BINS);
  const sm = rc.contexts(3 * SIGN_CONTEXTS);
  const mm = new rc.IntModel(3 * MAG_BINS);
  const table = bandTable(bands);
  const linked = (bi: number, field: number) => {
    const i = table[BAND_FIELDS * bi + field];
    return i >= 0 ? bands[i] : undefined;
  };
  // min(|q|, 15) of every detail coefficient coded so far (the contexts only read coded positions: earlier
  // in the band's raster order, the parent band and the siblings coded before this band), 0 elsewhere.
  const mag = new Uint8Array(q.length);
  for (let bi = 0; bi < bands.length; bi++) {
    const b = bands[bi];
    if (b.orient === 0) {
      codeLL(io, q, width, b);
      continue;
    }
    const cls = classOf(b);
    const group = cls >> 1;
    const parent = linked(bi, 6);
    const s1 = linked(bi, 7);
    const s2 = linked(bi, 8);
    const s1w = s1 ? s1.w : 0;
    const s2w = s2 ? s2.w : 0;
    const zBase = cls * NB_BINS;
    const sBase = (b.orient - 1) * SIGN_CONTEXTS;
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
        if (s1Row >= 0 && x < s1w) ps += mag[s1Row + x];
        if (s2Row >= 0 && x < s2w) ps += mag[s2Row + x];
        const pc = ps === 0 ? 0 : ps <= 2 ? 1 : 2;
        const v = q[idx];
        const z = io.bit(
          zm,
          (zBase + (s < NB_SUMS ? NB_LUT[s] : NB_BINS - 1)) * PS_BINS + pc,
          v !== 0 ? 1 : 0,
        );
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

/** Code the reconstruction offsets (units of 1/OFFSET_UNIT) of the bins with enough values. */
function codeOffsets(io: rc.BinaryCoder, k: Int32Array, counts: Int32Array): Float64Array {
  const m = new rc.IntModel(2);
  const out = new Float64Array(k.length);
  let prev = [0, 0];
  for (let j = 0; j < k.length; j++) {
    if (counts[j] < MIN_OFFSET_COUNT) continue;
    const c = j & 1;
    const v = prev[c] + io.int(m, k[j] - prev[c], c, 0);
    if (v < OFFSET_MIN || v > OFFSET_MAX) throw new RangeError(OFFSET_MESSAGE);
    prev = c ? [prev[0], v] : [v, prev[1]];
    out[j] = v / OFFSET_UNIT;
  }
  return out;
}

export interface CodedV2 {
  bytes: Uint8Array;
  /** Per band b: offsets[2b] for |q| = 1 and offsets[2b + 1] for |q| ≥ 2, in units of the band's step. */
  offsets: Float64Array;
}

/** The port (./wasm/assembly/coder.ts) where it can take these bands, else null (run the TypeScript). */
const port = (bands: Band[]) => (bands.length <= MAX_BANDS ? coderWasm(SETUP) : null);

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
  const { n: counts, sum } = binStats(q, width, bands, coeffs, steps);
  const k = offsetCodes(counts, sum);
  const w = port(bands);
  const bytes = w && encodeWasm(w, q, width, bandTable(bands), counts, k);
  if (bytes) return { bytes, offsets: offsetsOf(counts, k) };
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

/** Per band and bin class, the offset code (units of 1/OFFSET_UNIT) coder 2 writes, from binStats' counts and sums. */
export function offsetCodes(counts: Int32Array, sum: Float64Array): Int32Array {
  return Int32Array.from(sum, (s, j) =>
    counts[j] ? Math.max(OFFSET_MIN, Math.min(OFFSET_MAX, Math.round((OFFSET_UNIT * s) / counts[j]))) : 0,
  );
}

/** The offsets the decoder rebuilds: k / OFFSET_UNIT for the bins with enough values, 0 for the others. */
export function offsetsOf(counts: Int32Array, k: Int32Array): Float64Array {
  const out = new Float64Array(k.length);
  for (let j = 0; j < out.length; j++) if (counts[j] >= MIN_OFFSET_COUNT) out[j] = k[j] / OFFSET_UNIT;
  return out;
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
  return offsetsFromStats(binStats(q, width, bands, coeffs, steps));
}

/** The reconstruction offsets coder 2 writes, from binStats' counts and sums (or the same from a kernel). */
export function offsetsFromStats(stats: { n: Int32Array; sum: Float64Array }): Float64Array {
  return offsetsOf(stats.n, offsetCodes(stats.n, stats.sum));
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
  const w = port(bands);
  const fast = w && decodeWasm(w, bytes, q, width, bandTable(bands));
  if (fast) {
    rc.checkStreamEnd('plane data', fast.pos, bytes.length);
    return offsetsOf(fast.counts, fast.k);
  }
  const dec = new rc.RangeDecoder(bytes);
  let offsets: Float64Array = new Float64Array(2 * bands.length);
  if (dec.decodeDirect() !== 0) {
    codeCoefficients(dec, q, width, bands);
    offsets = codeOffsets(dec, new Int32Array(2 * bands.length), binStats(q, width, bands).n);
  }
  dec.checkEnd('plane data');
  return offsets;
}
