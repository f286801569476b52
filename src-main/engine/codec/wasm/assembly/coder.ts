// AssemblyScript port of coefficient coder 2 (src-main/engine/codec/coeff-coder.ts) and of the adaptive binary
// range coder and integer models it uses (src-main/engine/codec/range-coder.ts), both directions, compiled by
// scripts/build.mjs. It performs the same integer operations in the same order as the TypeScript, so it writes
// the same bytes and decodes the same coefficients; the references and the reasons for every context are in
// those two files, which stay the definition of the format. The constants come from ../coder-constants.ts,
// which the TypeScript imports too.
//
// Memory (host: ../coder-runtime.ts and ../../coeff-coder.ts): the fixed scratch area at SCRATCH holds the
// adaptation tables, the band table, the per-band statistics and every context; the planes (q, the magnitude
// map, the LL differences, the coefficients, the input or output bytes) follow it at offsets the host passes.
// The encoder's output is the last region: it grows the memory itself when the bytes outgrow it.
// One direction is chosen at compile time by the type parameter: i32 = encoder (Enc), f64 = decoder (Dec).

import {
  AT_BANDS, AT_CONTEXTS, AT_COUNTS, AT_NB_LUT, AT_OFFSET_CODES, AT_RECIP_FAST, AT_RECIP_SLOW,
  BAND_FIELDS, CLASSES, CTX, EG_BITS, EG_PREFIX_LIMIT, ERR_EG_PREFIX, ERR_MAGNITUDE_RANGE, ERR_OFFSET,
  ERR_OUT_OF_MEMORY, LL_CLASSES, MAG_BINS, MAX_MAGNITUDE, MIN_OFFSET_COUNT, NB_BINS, NB_SUMS, OFFSET_MAX,
  OFFSET_MIN, PROB_BITS, PROB_INIT, PROB_MARGIN, PROB_ONE, PS_BINS, SCRATCH, SIGN_CONTEXTS, SLOW_WINDOW, UNARY,
} from '../coder-constants';

/** Reports a refused stream or value to the host, which throws (so this call never returns). */
@external("env", "coderError") declare function coderError(code: i32, value: f64): void;

type Enc = i32;
type Dec = f64;

const CTX_BYTES: usize = CTX * 4;
const RENORM: u32 = 1 << 24;
const P_LO: u32 = PROB_MARGIN;
const P_HI: u32 = PROB_ONE - PROB_MARGIN;
const UNARY_U: u32 = UNARY;

const RF: usize = SCRATCH + AT_RECIP_FAST;
const RS: usize = SCRATCH + AT_RECIP_SLOW;
const NBL: usize = SCRATCH + AT_NB_LUT;
const BANDS: usize = SCRATCH + AT_BANDS;
const COUNTS: usize = SCRATCH + AT_COUNTS;
const KS: usize = SCRATCH + AT_OFFSET_CODES;

/** Contexts of an integer model with C classes: zero C, sign 3C, unary UNARY·C, then the Exp-Golomb prefix and bits. */
const INT_MODEL_PER_CLASS: i32 = 4 + UNARY;
const INT_MODEL_FIXED: i32 = 2 * EG_BITS;

// Context sets, in contexts from AT_CONTEXTS: significance, signs, magnitudes, the LL model, the offsets model.
const ZM_N: i32 = CLASSES * NB_BINS * PS_BINS;
const SM_N: i32 = 3 * SIGN_CONTEXTS;
const MM_C: i32 = 3 * MAG_BINS;
const ZM: usize = SCRATCH + AT_CONTEXTS;
const SM: usize = ZM + <usize>ZM_N * CTX_BYTES;
const MM: usize = SM + <usize>SM_N * CTX_BYTES;
const LLM: usize = MM + <usize>(INT_MODEL_PER_CLASS * MM_C + INT_MODEL_FIXED) * CTX_BYTES;
const OFM: usize = LLM + <usize>(INT_MODEL_PER_CLASS * LL_CLASSES + INT_MODEL_FIXED) * CTX_BYTES;
const CONTEXTS_END: usize = OFM + <usize>(INT_MODEL_PER_CLASS * 2 + INT_MODEL_FIXED) * CTX_BYTES;

// ---------------------------------------------------------------- range coder state
let low: u64 = 0;
let range: u32 = 0;
let cache: u32 = 0;
let cacheSize: u32 = 0;
let outPos: usize = 0;
let outCap: usize = 0;
let code: u32 = 0;
let inPos: usize = 0;
let inEnd: usize = 0;
let overrun: u32 = 0;

function resetContexts(): void {
  for (let p = ZM; p < CONTEXTS_END; p += CTX_BYTES) {
    store<i32>(p, PROB_INIT);
    store<i32>(p, PROB_INIT, 4);
    store<i32>(p, 0, 8);
  }
}

/** P(bit = 0) of the context at p, PROB_MARGIN away from 0 and 1. */
@inline function prob(p: usize): u32 {
  const v = <u32>(load<i32>(p) + load<i32>(p, 4)) >>> 1;
  return v < P_LO ? P_LO : v > P_HI ? P_HI : v;
}

@inline function adapt(p: usize, bit: u32): void {
  const n = load<i32>(p, 8);
  const rf = load<i32>(RF + (<usize>n << 2));
  const rs = load<i32>(RS + (<usize>n << 2));
  if (n < SLOW_WINDOW - 1) store<i32>(p, n + 1, 8);
  const target: i32 = bit ? 0 : PROB_ONE;
  const f = load<i32>(p);
  const sl = load<i32>(p, 4);
  // i32 division truncates toward zero, as `x / 65536 | 0` does on these (exact, < 2^31) products.
  store<i32>(p, f + ((target - f) * rf) / 65536);
  store<i32>(p, sl + ((target - sl) * rs) / 65536, 4);
}

function putByte(b: u32): void {
  if (outPos >= outCap) {
    const pages = <i32>(outCap >>> 17) + 1; // grow by half the memory, at least one page
    if (memory.grow(pages) < 0) coderError(ERR_OUT_OF_MEMORY, 0);
    outCap = <usize>memory.size() << 16;
  }
  store<u8>(outPos++, <u8>b);
}

function shiftLow(): void {
  if (low < 0xff000000 || low >= 0x100000000) {
    const carry = <u32>(low >> 32);
    let temp = cache;
    do {
      putByte((temp + carry) & 0xff);
      temp = 0xff;
    } while (--cacheSize != 0);
    cache = <u32>(low >> 24) & 0xff;
  }
  cacheSize++;
  low = (low & 0xffffff) << 8;
}

@inline function nextByte(): u32 {
  if (inPos < inEnd) return load<u8>(inPos++);
  overrun++;
  return 0;
}

/** One bit on the context at p: the encoder writes v and returns it; the decoder returns the bit it reads. */
@inline function bit<T>(p: usize, v: u32): u32 {
  const r = range;
  const bound = (r >>> PROB_BITS) * prob(p);
  let next: u32;
  let b: u32;
  if (isFloat<T>()) {
    if (code < bound) {
      next = bound;
      b = 0;
    } else {
      code -= bound;
      next = r - bound;
      b = 1;
    }
  } else {
    b = v;
    if (v) {
      low += bound;
      next = r - bound;
    } else next = bound;
  }
  adapt(p, b);
  while (next < RENORM) {
    next <<= 8;
    if (isFloat<T>()) code = (code << 8) | nextByte();
    else shiftLow();
  }
  range = next;
  return b;
}

/** A bit with probability ½. */
function direct<T>(v: u32): u32 {
  range >>>= 1;
  let b: u32 = v;
  if (isFloat<T>()) {
    b = 0;
    if (code >= range) {
      code -= range;
      b = 1;
    }
  } else if (v) low += range;
  while (range < RENORM) {
    range <<= 8;
    if (isFloat<T>()) code = (code << 8) | nextByte();
    else shiftLow();
  }
  return b;
}

/** Unary-then-Exp-Golomb magnitude on the model at m (c classes), class cls. */
function magnitude<T>(m: usize, c: i32, a: i64, cls: i32): u32 {
  const unary = m + <usize>(4 * c + cls * UNARY) * CTX_BYTES;
  const egp = m + <usize>((4 + UNARY) * c) * CTX_BYTES;
  const egb = egp + <usize>EG_BITS * CTX_BYTES;
  if (isFloat<T>()) {
    for (let i = 0; i < UNARY; i++) if (!bit<T>(unary + <usize>i * CTX_BYTES, 0)) return i;
    let nbits = 0;
    while (bit<T>(egp + <usize>nbits * CTX_BYTES, 0)) {
      nbits++;
      if (nbits >= EG_PREFIX_LIMIT) coderError(ERR_EG_PREFIX, 0);
    }
    let r: u32 = 1;
    for (let i = nbits - 1; i >= 0; i--) {
      const b = i == nbits - 1 ? bit<T>(egb + <usize>nbits * CTX_BYTES, 0) : direct<T>(0);
      r = r * 2 + b;
    }
    return r + UNARY - 1;
  }
  if (!(a >= 0 && a < MAX_MAGNITUDE)) coderError(ERR_MAGNITUDE_RANGE, <f64>a);
  const v = <u32>a;
  const stop = v < UNARY_U ? v : UNARY_U;
  for (let i: u32 = 0; i < stop; i++) bit<T>(unary + <usize>i * CTX_BYTES, 1);
  if (v < UNARY_U) {
    bit<T>(unary + <usize>v * CTX_BYTES, 0);
    return v;
  }
  const r = v - UNARY + 1;
  const nbits = <i32>(31 - clz(r));
  for (let i = 0; i < nbits; i++) bit<T>(egp + <usize>i * CTX_BYTES, 1);
  bit<T>(egp + <usize>nbits * CTX_BYTES, 0);
  for (let i = nbits - 1; i >= 0; i--) {
    const b = (r >>> i) & 1;
    if (i == nbits - 1) bit<T>(egb + <usize>nbits * CTX_BYTES, b);
    else direct<T>(b);
  }
  return v;
}

/** A signed integer on the model at m (c classes): zero flag, sign on the previous sign, magnitude. */
function int<T>(m: usize, c: i32, v: i64, cls: i32, prevSign: i32): i32 {
  const zero = m + <usize>cls * CTX_BYTES;
  const sign = m + <usize>(c + cls * 3 + prevSign + 1) * CTX_BYTES;
  if (isFloat<T>()) {
    if (!bit<T>(zero, 0)) return 0;
    const neg = bit<T>(sign, 0);
    const a = <i32>magnitude<T>(m, c, 0, cls) + 1;
    return neg ? -a : a;
  }
  if (v == 0) {
    bit<T>(zero, 0);
    return 0;
  }
  bit<T>(zero, 1);
  bit<T>(sign, v < 0 ? 1 : 0);
  magnitude<T>(m, c, (v < 0 ? -v : v) - 1, cls);
  return <i32>v;
}

@inline function sgn(v: i32): i32 { return v > 0 ? 1 : v < 0 ? -1 : 0; }
@inline function iabs(v: i32): u32 { return <u32>(v < 0 ? -v : v); }
@inline function band(bi: i32, field: i32): i32 { return load<i32>(BANDS + <usize>(bi * BAND_FIELDS + field) * 4); }

/** The LL band (band 0's geometry) by MED prediction; differences in d. */
function codeLL<T>(q: usize, d: usize, width: i32, bi: i32): void {
  const x0 = band(bi, 0), y0 = band(bi, 1), bw = band(bi, 2), bh = band(bi, 3);
  const w4 = <usize>width << 2;
  for (let y = 0; y < bh; y++)
    for (let x = 0; x < bw; x++) {
      const pq = q + (<usize>((y0 + y) * width + x0 + x) << 2);
      const a: i32 = x > 0 ? load<i32>(pq - 4) : y > 0 ? load<i32>(pq - w4) : 0;
      const u: i32 = y > 0 ? load<i32>(pq - w4) : a;
      const c: i32 = x > 0 && y > 0 ? load<i32>(pq - w4 - 4) : u;
      const mx = a > u ? a : u;
      const mn = a < u ? a : u;
      const pred: i64 = c >= mx ? <i64>mn : c <= mn ? <i64>mx : <i64>a + <i64>u - <i64>c;
      const pd = d + (<usize>(y * bw + x) << 2);
      const dl = x > 0 ? load<i32>(pd - 4) : 0;
      const act: u32 = iabs(dl) + (y > 0 ? iabs(load<i32>(pd - (<usize>bw << 2))) : 0);
      const cls = act == 0 ? 0 : act <= 2 ? 1 : act <= 6 ? 2 : act <= 20 ? 3 : 4;
      const dv = int<T>(LLM, LL_CLASSES, isFloat<T>() ? 0 : <i64>load<i32>(pq) - pred, cls, sgn(dl));
      store<i32>(pd, dv);
      if (isFloat<T>()) store<i32>(pq, <i32>(pred + <i64>dv));
    }
}

/** One detail band: significance, sign and magnitude of every coefficient, in raster order. */
function codeDetail<T>(q: usize, mag: usize, width: i32, bi: i32): void {
  const x0 = band(bi, 0), y0 = band(bi, 1), bw = band(bi, 2), bh = band(bi, 3);
  const orient = band(bi, 4), cls = band(bi, 5);
  const parent = band(bi, 6), s1 = band(bi, 7), s2 = band(bi, 8);
  const group = cls >> 1;
  const zBase = cls * NB_BINS;
  const sBase = (orient - 1) * SIGN_CONTEXTS;
  const mmBase = group * MAG_BINS;
  const pw = parent >= 0 ? band(parent, 2) : 0;
  const ph = parent >= 0 ? band(parent, 3) : 0;
  const s1w = s1 >= 0 ? band(s1, 2) : 0;
  const s1h = s1 >= 0 ? band(s1, 3) : 0;
  const s2w = s2 >= 0 ? band(s2, 2) : 0;
  const s2h = s2 >= 0 ? band(s2, 3) : 0;
  const w = <usize>width;
  for (let y = 0; y < bh; y++) {
    const row = (y0 + y) * width + x0;
    const pRow = parent >= 0 ? (band(parent, 1) + min(ph - 1, y >> 1)) * width + band(parent, 0) : -1;
    const pLast = parent >= 0 ? pw - 1 : 0;
    const s1Row = s1 >= 0 && y < s1h ? (band(s1, 1) + y) * width + band(s1, 0) : -1;
    const s2Row = s2 >= 0 && y < s2h ? (band(s2, 1) + y) * width + band(s2, 0) : -1;
    for (let x = 0; x < bw; x++) {
      const idx = <usize>(row + x);
      const pm = mag + idx;
      const l: i32 = x > 0 ? load<u8>(pm - 1) : 0;
      const u: i32 = y > 0 ? load<u8>(pm - w) : 0;
      let s = 2 * (l + u);
      if (y > 0) {
        if (x > 0) s += load<u8>(pm - w - 1);
        if (x + 1 < bw) s += load<u8>(pm - w + 1);
      }
      if (x > 1) s += load<u8>(pm - 2);
      if (y > 1) s += load<u8>(pm - 2 * w);
      let ps: i32 = pRow >= 0 ? 2 * load<u8>(mag + <usize>(pRow + (x >> 1 < pLast ? x >> 1 : pLast))) : 0;
      if (s1Row >= 0 && x < s1w) ps += load<u8>(mag + <usize>(s1Row + x));
      if (s2Row >= 0 && x < s2w) ps += load<u8>(mag + <usize>(s2Row + x));
      const pc = ps == 0 ? 0 : ps <= 2 ? 1 : 2;
      const pq = q + (idx << 2);
      const v = isFloat<T>() ? 0 : load<i32>(pq);
      const nb: i32 = s < NB_SUMS ? load<u8>(NBL + <usize>s) : NB_BINS - 1;
      const zc = (zBase + nb) * PS_BINS + pc;
      if (!bit<T>(ZM + <usize>zc * CTX_BYTES, v != 0 ? 1 : 0)) continue;
      const left = x > 0 ? load<i32>(pq - 4) : 0;
      const up = y > 0 ? load<i32>(pq - (w << 2)) : 0;
      const sc = (left > 0 ? 2 : left < 0 ? 0 : 1) * 3 + (up > 0 ? 2 : up < 0 ? 0 : 1);
      const neg = bit<T>(SM + <usize>(sBase + sc) * CTX_BYTES, v < 0 ? 1 : 0);
      const act = l + u + (ps >> 1);
      const mc = act == 0 ? 0 : act <= 1 ? 1 : act <= 3 ? 2 : act <= 6 ? 3 : act <= 12 ? 4 : 5;
      const a = <i32>magnitude<T>(MM, MM_C, isFloat<T>() ? 0 : <i64>iabs(v) - 1, mmBase + mc) + 1;
      if (isFloat<T>()) store<i32>(pq, neg ? -a : a);
      store<u8>(pm, <u8>(a > 15 ? 15 : a));
    }
  }
}

function codeCoefficients<T>(q: usize, mag: usize, d: usize, width: i32, nBands: i32): void {
  resetContexts();
  for (let bi = 0; bi < nBands; bi++) {
    if (band(bi, 4) == 0) codeLL<T>(q, d, width, bi);
    else codeDetail<T>(q, mag, width, bi);
  }
}

/** The reconstruction offset codes of the bins with enough values (the decoder writes them to KS). */
function codeOffsets<T>(nb2: i32): void {
  let p0 = 0;
  let p1 = 0;
  for (let j = 0; j < nb2; j++) {
    if (load<i32>(COUNTS + (<usize>j << 2)) < MIN_OFFSET_COUNT) continue;
    const c = j & 1;
    const prev = c ? p1 : p0;
    const kj = isFloat<T>() ? 0 : load<i32>(KS + (<usize>j << 2));
    const v = prev + int<T>(OFM, 2, <i64>(kj - prev), c, 0);
    if (v < OFFSET_MIN || v > OFFSET_MAX) coderError(ERR_OFFSET, v);
    if (c) p1 = v;
    else p0 = v;
    store<i32>(KS + (<usize>j << 2), v);
  }
}

/** Per band b and bin class (|q| = 1, |q| ≥ 2): COUNTS[2b + class], the count of coded values (binStats in coeff-coder.ts). */
function countBins(q: usize, width: i32, nBands: i32): void {
  for (let bi = 0; bi < nBands; bi++) {
    const x0 = band(bi, 0), y0 = band(bi, 1), bw = band(bi, 2), bh = band(bi, 3);
    let n1 = 0;
    let n2 = 0;
    for (let y = 0; y < bh; y++) {
      const row = q + (<usize>((y0 + y) * width + x0) << 2);
      const end = row + (<usize>bw << 2);
      for (let p = row; p < end; p += 4) {
        const v = load<i32>(p);
        if (v == 1 || v == -1) n1++;
        else if (v != 0) n2++;
      }
    }
    store<i32>(COUNTS + (<usize>(2 * bi) << 2), n1);
    store<i32>(COUNTS + (<usize>(2 * bi + 1) << 2), n2);
  }
}

/**
 * Encode q (n i32 at q, row stride width; mag: n bytes of scratch; d: the LL band's i32 differences) with the
 * offset codes KS of the bins counted in COUNTS. Returns the byte count written at out (the last region).
 */
export function encode(q: usize, mag: usize, d: usize, n: usize, width: i32, nBands: i32, nonZero: i32, out: usize): usize {
  low = 0;
  range = 0xffffffff;
  cache = 0;
  cacheSize = 1;
  outPos = out;
  outCap = <usize>memory.size() << 16;
  direct<Enc>(nonZero ? 1 : 0);
  if (nonZero) {
    memory.fill(mag, 0, n);
    codeCoefficients<Enc>(q, mag, d, width, nBands);
    codeOffsets<Enc>(2 * nBands);
  }
  for (let i = 0; i < 5; i++) shiftLow();
  return outPos - out;
}

/**
 * Decode len bytes at input into q (n i32, zeroed here), the offset codes into KS and the bin counts into
 * COUNTS. Returns the bytes read (the host checks it against len), or -1 if the decoder read past the end.
 */
export function decode(q: usize, mag: usize, d: usize, n: usize, width: i32, nBands: i32, input: usize, len: usize): isize {
  memory.fill(q, 0, n << 2);
  memory.fill(KS, 0, <usize>(2 * nBands) << 2);
  memory.fill(COUNTS, 0, <usize>(2 * nBands) << 2);
  inPos = input;
  inEnd = input + len;
  overrun = 0;
  range = 0xffffffff;
  code = 0;
  for (let i = 0; i < 5; i++) code = (code << 8) | nextByte();
  if (direct<Dec>(0)) {
    memory.fill(mag, 0, n);
    codeCoefficients<Dec>(q, mag, d, width, nBands);
    countBins(q, width, nBands);
    codeOffsets<Dec>(2 * nBands);
  }
  return overrun ? -1 : <isize>(inPos - input);
}
