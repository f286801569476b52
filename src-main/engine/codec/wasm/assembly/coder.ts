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
// One direction is chosen at compile time by the type parameter: i32 = encoder (Enc), f64 = decoder (Dec); q's
// element type by a second one, Q: i32, or i16 (a plane arena's narrow q, ../arena.ts), where the decoder refuses
// a value past NARROW_MAX (ERR_NARROW: the host decodes such a plane into an i32 q instead).

import {
  AT_BANDS, AT_CONTEXTS, AT_COUNTS, AT_NB_LUT, AT_OFFSET_CODES, AT_RECIP_FAST, AT_RECIP_SLOW,
  BAND_FIELDS, CLASSES, CTX, EG_BITS, EG_PREFIX_LIMIT, ERR_EG_PREFIX, ERR_MAGNITUDE_RANGE, ERR_OFFSET,
  ERR_NARROW, ERR_OUT_OF_MEMORY, LL_CLASSES, MAG_BINS, MAX_MAGNITUDE, MIN_OFFSET_COUNT, NB_BINS, NB_SUMS, OFFSET_MAX,
  OFFSET_MIN, PROB_BITS, PROB_INIT, PROB_MARGIN, PROB_ONE, PS_BINS, SCRATCH, SCRATCH_BYTES, SIGN_CONTEXTS, SLOW_WINDOW,
  UNARY,
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
/** Largest |q| an i16 q holds here (as the quantiser's narrow q, ./lifting.ts NARROW_MAX). */
const NARROW_MAX: i64 = 32767;

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

// The significance contexts of a detail band's class, which the module builds from the bin table NBL for each
// band, after the contexts in the scratch area: per neighbourhood sum s (at most 2·15 + 15 + NB_SUMS, see
// aboveByte()) and parent/sibling class pc, at CT[4s + pc] (u16), the context's byte offset from ZM. Then a
// zero byte that stands in for a missing parent.
const CT_SUMS: i32 = 3 * 15 + NB_SUMS + 1;
const CT: usize = CONTEXTS_END;
const ZERO: usize = CT + <usize>(CT_SUMS * 4) * 2;
const TABLES_END: usize = ZERO + 1;

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

/** The LL band (band 0's geometry) by MED prediction; differences in d. The decoder counts its values (setCounts). */
function codeLL<T, Q>(q: usize, d: usize, width: i32, bi: i32): void {
  const x0 = band(bi, 0), y0 = band(bi, 1), bw = band(bi, 2), bh = band(bi, 3);
  const qs = sizeof<Q>();
  const w4 = <usize>width << alignof<Q>();
  let n1 = 0;
  let n2 = 0;
  for (let y = 0; y < bh; y++)
    for (let x = 0; x < bw; x++) {
      const pq = q + (<usize>((y0 + y) * width + x0 + x) << alignof<Q>());
      const a: i32 = x > 0 ? <i32>load<Q>(pq - qs) : y > 0 ? <i32>load<Q>(pq - w4) : 0;
      const u: i32 = y > 0 ? <i32>load<Q>(pq - w4) : a;
      const c: i32 = x > 0 && y > 0 ? <i32>load<Q>(pq - w4 - qs) : u;
      const mx = a > u ? a : u;
      const mn = a < u ? a : u;
      const pred: i64 = c >= mx ? <i64>mn : c <= mn ? <i64>mx : <i64>a + <i64>u - <i64>c;
      const pd = d + (<usize>(y * bw + x) << 2);
      const dl = x > 0 ? load<i32>(pd - 4) : 0;
      const act: u32 = iabs(dl) + (y > 0 ? iabs(load<i32>(pd - (<usize>bw << 2))) : 0);
      const cls = act == 0 ? 0 : act <= 2 ? 1 : act <= 6 ? 2 : act <= 20 ? 3 : 4;
      const dv = int<T>(LLM, LL_CLASSES, isFloat<T>() ? 0 : <i64><i32>load<Q>(pq) - pred, cls, sgn(dl));
      store<i32>(pd, dv);
      if (isFloat<T>()) {
        const wide = pred + <i64>dv;
        if (sizeof<Q>() == 2 && (wide > NARROW_MAX || wide < -NARROW_MAX)) coderError(ERR_NARROW, <f64>wide);
        const v = <i32>wide;
        store<Q>(pq, v);
        if (v == 1 || v == -1) n1++;
        else if (v != 0) n2++;
      }
    }
  if (isFloat<T>()) setCounts(bi, n1, n2);
}

// The current row's links (set by linkRow): the parent row, read at column min(x >> 1, pLast) (the ZERO byte
// where there is none), and the rows of the sibling bands coded before this one, read below their widths
// lim1 and lim2 (0 where there is none).
let pp: usize = 0;
let pLast: i32 = 0;
let sp1: usize = 0;
let lim1: i32 = 0;
let sp2: usize = 0;
let lim2: i32 = 0;

function linkRow(mag: usize, width: i32, y: i32, parent: i32, s1: i32, s2: i32): void {
  pp = ZERO;
  pLast = 0;
  const pRow = parent >= 0 ? (band(parent, 1) + min(band(parent, 3) - 1, y >> 1)) * width + band(parent, 0) : -1;
  if (pRow >= 0) {
    pp = mag + <usize>pRow;
    pLast = band(parent, 2) - 1;
  }
  sp1 = mag;
  lim1 = 0;
  if (s1 >= 0 && y < band(s1, 3)) {
    sp1 = mag + <usize>((band(s1, 1) + y) * width + band(s1, 0));
    lim1 = band(s1, 2);
  }
  sp2 = mag;
  lim2 = 0;
  if (s2 >= 0 && y < band(s2, 3)) {
    sp2 = mag + <usize>((band(s2, 1) + y) * width + band(s2, 0));
    lim2 = band(s2, 2);
  }
}

/** Column x's parent/sibling sum (ps in coeff-coder.ts): 2·parent + the siblings. */
@inline function linkSum(x: i32): i32 {
  const px = x >> 1;
  let ps: i32 = <i32>load<u8>(pp + <usize>(px < pLast ? px : pLast)) << 1;
  if (x < lim1) ps += load<u8>(sp1 + <usize>x);
  if (x < lim2) ps += load<u8>(sp2 + <usize>x);
  return ps;
}

/**
 * What the coder needs of column x from outside the current row: 4·min(A, NB_SUMS) + pc, where A is the
 * neighbourhood sum of the rows above (2·upper + upper-left + upper-right + two above; the left terms come
 * from the row itself) and pc the class of the parent/sibling sum: with 4·(2·left + two-left) added, the
 * index of the significance context in CT. Clamping A keeps the bin: every sum past NB_SUMS − 1 has the same
 * one. m1, m2: 0xff where the band has the row above, and two above.
 */
@inline function aboveByte(x: i32, bw: i32, mu: usize, mu2: usize, m1: i32, m2: i32): i32 {
  const xs = <usize>x;
  let a: i32 = ((<i32>load<u8>(mu + xs) & m1) << 1) + (<i32>load<u8>(mu2 + xs) & m2);
  if (x > 0) a += <i32>load<u8>(mu + xs - 1) & m1;
  if (x + 1 < bw) a += <i32>load<u8>(mu + xs + 1) & m1;
  const ps = linkSum(x);
  return ((a < NB_SUMS ? a : NB_SUMS) << 2) | (ps == 0 ? 0 : ps <= 2 ? 1 : 2);
}

/**
 * Pass 1 of a row: aboveByte() of every column, written into the row's own (still uncoded) magnitude bytes,
 * which pass 2 replaces column by column with the coded magnitudes. Sixteen columns at a time where the row
 * above, the parent and the siblings all cover them.
 */
function prepareRow(pm: usize, bw: i32, w: usize, y: i32): void {
  const mu = pm - w;
  const mu2 = mu - w;
  const m1 = y > 0 ? 0xff : 0;
  const m2 = y > 1 ? 0xff : 0;
  const head = bw < 2 ? bw : 2;
  let x = 0;
  for (; x < head; x++) store<u8>(pm + <usize>x, <u8>aboveByte(x, bw, mu, mu2, m1, m2));
  // The vector part: even x (the parent doubles up), the upper-right inside the band, x + 15 within the
  // parent's columns and the siblings' widths, where they exist.
  const hasParent = pp != ZERO;
  let end = bw - 1;
  if (hasParent) end = min(end, 2 * pLast + 2);
  if (lim1 > 0) end = min(end, lim1);
  if (lim2 > 0) end = min(end, lim2);
  const vm1 = i8x16.splat(<i8>m1);
  const vm2 = i8x16.splat(<i8>m2);
  const vp = i8x16.splat(hasParent ? -1 : 0);
  const v1 = i8x16.splat(lim1 > 0 ? -1 : 0);
  const v2 = i8x16.splat(lim2 > 0 ? -1 : 0);
  const cap = i8x16.splat(<i8>NB_SUMS);
  const zero = i8x16.splat(0);
  const two = i8x16.splat(2);
  const one = i8x16.splat(1);
  for (; x + 16 <= end; x += 16) {
    const xs = <usize>x;
    const u = v128.and(v128.load(mu + xs), vm1);
    const side = v128.and(i8x16.add(v128.load(mu + xs - 1), v128.load(mu + xs + 1)), vm1);
    const a = i8x16.add(i8x16.add(u, u), i8x16.add(side, v128.and(v128.load(mu2 + xs), vm2)));
    let par = v128.and(v128.load64_zero(pp + (xs >> 1)), vp);
    par = i8x16.shuffle(par, par, 0, 0, 1, 1, 2, 2, 3, 3, 4, 4, 5, 5, 6, 6, 7, 7);
    const sib = i8x16.add(v128.and(v128.load(sp1 + xs), v1), v128.and(v128.load(sp2 + xs), v2));
    const ps = i8x16.add(i8x16.add(par, par), sib);
    const pc = i8x16.add(v128.and(i8x16.gt_u(ps, zero), one), v128.and(i8x16.gt_u(ps, two), one));
    const a2 = i8x16.add(i8x16.min_u(a, cap), i8x16.min_u(a, cap));
    v128.store(pm + xs, v128.or(i8x16.add(a2, a2), pc));
  }
  for (; x < bw; x++) store<u8>(pm + <usize>x, <u8>aboveByte(x, bw, mu, mu2, m1, m2));
}

/**
 * One detail band: significance, sign and magnitude of every coefficient, in raster order, each row in two
 * passes. Pass 1 (prepareRow) gathers what the contexts need from outside the row; pass 2 adds the left
 * neighbours, held in registers, and looks the significance context up in the table at CT. The significance
 * bit, by far the most frequent symbol, is coded here with the range (and the decoder's code) in locals; the
 * rarer sign and magnitude go through bit() on the globals.
 */
function codeDetail<T, Q>(q: usize, mag: usize, width: i32, bi: i32): void {
  const x0 = band(bi, 0), y0 = band(bi, 1), bw = band(bi, 2), bh = band(bi, 3);
  const orient = band(bi, 4), cls = band(bi, 5);
  const parent = band(bi, 6), s1 = band(bi, 7), s2 = band(bi, 8);
  classTable(cls);
  const sBase = (orient - 1) * SIGN_CONTEXTS;
  const mmBase = (cls >> 1) * MAG_BINS;
  const w = <usize>width;
  let rng = range;
  let cd: u32 = isFloat<T>() ? code : 0;
  let n1 = 0;
  let n2 = 0;
  for (let y = 0; y < bh; y++) {
    const row = (y0 + y) * width + x0;
    const pm = mag + <usize>row;
    const pq = q + (<usize>row << alignof<Q>());
    linkRow(mag, width, y, parent, s1, s2);
    prepareRow(pm, bw, w, y);
    // k4 = 4·(2·left + two-left), l4 = 4·left: the row's own part of the context index.
    let k4: i32 = 0;
    let l4: i32 = 0;
    let x = 0;
    for (;;) {
      while (rng < RENORM) {
        rng <<= 8;
        if (isFloat<T>()) cd = (cd << 8) | nextByte();
        else shiftLow();
      }
      if (x >= bw) break;
      const above = <i32>load<u8>(pm + <usize>x);
      let p: usize;
      if ((k4 | above) == 0) {
        // A quiet run: no coded neighbour, so one context (the first of the class) for as long as the
        // coefficients stay insignificant, kept in locals, and no magnitude to store (the byte is already 0).
        p = ZM + <usize>load<u16>(CT);
        let f = load<i32>(p);
        let sl = load<i32>(p, 4);
        let n = load<i32>(p, 8);
        let sig = false;
        // stop: the run has ended (a significant coefficient, the end of the row, a renormalisation, or a
        // coded neighbour ahead).
        let stop = false;
        // Each step is bit(p, 0) with adapt()'s update for a 0: target PROB_ONE, (PROB_ONE − f)·r ≥ 0, so the
        // truncating division is a shift. While the context is young, its rates come from the tables.
        while (n < SLOW_WINDOW - 1) {
          let pr = <u32>(f + sl) >>> 1;
          pr = pr < P_LO ? P_LO : pr > P_HI ? P_HI : pr;
          const bound = (rng >>> PROB_BITS) * pr;
          if (isFloat<T>() ? cd >= bound : <i32>load<Q>(pq + (<usize>x << alignof<Q>())) != 0) {
            sig = stop = true;
            break;
          }
          rng = bound;
          f += ((PROB_ONE - f) * load<i32>(RF + (<usize>n << 2))) >>> 16;
          sl += ((PROB_ONE - sl) * load<i32>(RS + (<usize>n << 2))) >>> 16;
          n++;
          x++;
          if (x >= bw || rng < RENORM || load<u8>(pm + <usize>x) != 0) {
            stop = true;
            break;
          }
        }
        if (!stop) {
          // A mature context: fixed rates, until an update no longer changes it.
          const rf = load<i32>(RF + (<usize>(SLOW_WINDOW - 1) << 2));
          const rs = load<i32>(RS + (<usize>(SLOW_WINDOW - 1) << 2));
          let settled = false;
          for (;;) {
            let pr = <u32>(f + sl) >>> 1;
            pr = pr < P_LO ? P_LO : pr > P_HI ? P_HI : pr;
            const bound = (rng >>> PROB_BITS) * pr;
            if (isFloat<T>() ? cd >= bound : <i32>load<Q>(pq + (<usize>x << alignof<Q>())) != 0) {
              sig = true;
              break;
            }
            rng = bound;
            const df = ((PROB_ONE - f) * rf) >>> 16;
            const ds = ((PROB_ONE - sl) * rs) >>> 16;
            f += df;
            sl += ds;
            x++;
            if (x >= bw || rng < RENORM || load<u8>(pm + <usize>x) != 0) break;
            if ((df | ds) == 0) {
              settled = true;
              break;
            }
          }
          if (settled) {
            // A settled context: a 0 leaves it as it is, so only the range moves.
            let pr = <u32>(f + sl) >>> 1;
            pr = pr < P_LO ? P_LO : pr > P_HI ? P_HI : pr;
            for (;;) {
              const bound = (rng >>> PROB_BITS) * pr;
              if (isFloat<T>() ? cd >= bound : <i32>load<Q>(pq + (<usize>x << alignof<Q>())) != 0) {
                sig = true;
                break;
              }
              rng = bound;
              x++;
              if (x >= bw || rng < RENORM || load<u8>(pm + <usize>x) != 0) break;
            }
          }
        }
        store<i32>(p, f);
        store<i32>(p, sl, 4);
        store<i32>(p, n, 8);
        if (!sig) continue;
      } else {
        p = ZM + <usize>load<u16>(CT + (<usize>(k4 + above) << 1));
        // bit(p, 0) unless the coefficient is significant, the adaptation specialised for 0 (see adapt()).
        const f = load<i32>(p);
        const sl = load<i32>(p, 4);
        const n = load<i32>(p, 8);
        let pr = <u32>(f + sl) >>> 1;
        pr = pr < P_LO ? P_LO : pr > P_HI ? P_HI : pr;
        const bound = (rng >>> PROB_BITS) * pr;
        if (isFloat<T>() ? cd < bound : <i32>load<Q>(pq + (<usize>x << alignof<Q>())) == 0) {
          rng = bound;
          store<i32>(p, n + <i32>(n < SLOW_WINDOW - 1), 8);
          store<i32>(p, f + (((PROB_ONE - f) * load<i32>(RF + (<usize>n << 2))) >>> 16));
          store<i32>(p, sl + (((PROB_ONE - sl) * load<i32>(RS + (<usize>n << 2))) >>> 16), 4);
          store<u8>(pm + <usize>x, 0);
          k4 = l4;
          l4 = 0;
          x++;
          continue;
        }
      }
      // A significant coefficient at x: its significance, sign and magnitude on the globals.
      range = rng;
      if (isFloat<T>()) code = cd;
      bit<T>(p, 1);
      const xs = <usize>x;
      const px = pq + (xs << alignof<Q>());
      const v = isFloat<T>() ? 0 : <i32>load<Q>(px);
      const left = x > 0 ? <i32>load<Q>(px - sizeof<Q>()) : 0;
      const up = y > 0 ? <i32>load<Q>(px - (w << alignof<Q>())) : 0;
      const sc = (left > 0 ? 2 : left < 0 ? 0 : 1) * 3 + (up > 0 ? 2 : up < 0 ? 0 : 1);
      const neg = bit<T>(SM + <usize>(sBase + sc) * CTX_BYTES, v < 0 ? 1 : 0);
      const act = (l4 >> 2) + (y > 0 ? <i32>load<u8>(pm + xs - w) : 0) + (linkSum(x) >> 1);
      const mc = act == 0 ? 0 : act <= 1 ? 1 : act <= 3 ? 2 : act <= 6 ? 3 : act <= 12 ? 4 : 5;
      let a = <i32>magnitude<T>(MM, MM_C, isFloat<T>() ? 0 : <i64>iabs(v) - 1, mmBase + mc) + 1;
      if (isFloat<T>()) {
        if (sizeof<Q>() == 2 && <i64>a > NARROW_MAX) coderError(ERR_NARROW, <f64>a);
        store<Q>(px, neg ? -a : a);
        if (a == 1) n1++;
        else n2++;
      }
      if (a > 15) a = 15;
      store<u8>(pm + xs, <u8>a);
      k4 = (a << 3) + l4;
      l4 = a << 2;
      rng = range;
      if (isFloat<T>()) cd = code;
      x++;
    }
  }
  range = rng;
  if (isFloat<T>()) {
    code = cd;
    setCounts(bi, n1, n2);
  }
}

function codeCoefficients<T, Q>(q: usize, mag: usize, d: usize, width: i32, nBands: i32): void {
  if (TABLES_END > <usize>(SCRATCH + SCRATCH_BYTES)) unreachable();
  resetContexts();
  store<u8>(ZERO, 0);
  for (let bi = 0; bi < nBands; bi++) {
    if (band(bi, 4) == 0) codeLL<T, Q>(q, d, width, bi);
    else codeDetail<T, Q>(q, mag, width, bi);
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

/** Per band b and bin class (|q| = 1, |q| ≥ 2): COUNTS[2b + class], the count of decoded values (binStats in coeff-coder.ts). */
@inline function setCounts(bi: i32, n1: i32, n2: i32): void {
  store<i32>(COUNTS + (<usize>(2 * bi) << 2), n1);
  store<i32>(COUNTS + (<usize>(2 * bi + 1) << 2), n2);
}

/** The table at CT for the bands of context class cls. */
function classTable(cls: i32): void {
  for (let s = 0; s < CT_SUMS; s++) {
    const nb: i32 = s < NB_SUMS ? load<u8>(NBL + <usize>s) : NB_BINS - 1;
    for (let pc = 0; pc < PS_BINS; pc++)
      store<u16>(CT + (<usize>(4 * s + pc) << 1), <u16>(<usize>((cls * NB_BINS + nb) * PS_BINS + pc) * CTX_BYTES));
  }
}

/**
 * Encode q (n i32 at q, row stride width; mag: n bytes of scratch; d: the LL band's i32 differences) with the
 * offset codes KS of the bins counted in COUNTS. Returns the byte count written at out (the last region).
 */
export function encode(q: usize, mag: usize, d: usize, n: usize, width: i32, nBands: i32, nonZero: i32, out: usize): usize {
  return encodeQ<i32>(q, mag, d, n, width, nBands, nonZero, out);
}

/** {@link encode} of an i16 q. */
export function encode16(q: usize, mag: usize, d: usize, n: usize, width: i32, nBands: i32, nonZero: i32, out: usize): usize {
  return encodeQ<i16>(q, mag, d, n, width, nBands, nonZero, out);
}

function encodeQ<Q>(q: usize, mag: usize, d: usize, n: usize, width: i32, nBands: i32, nonZero: i32, out: usize): usize {
  low = 0;
  range = 0xffffffff;
  cache = 0;
  cacheSize = 1;
  outPos = out;
  outCap = <usize>memory.size() << 16;
  direct<Enc>(nonZero ? 1 : 0);
  if (nonZero) {
    memory.fill(mag, 0, n);
    codeCoefficients<Enc, Q>(q, mag, d, width, nBands);
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
  return decodeQ<i32>(q, mag, d, n, width, nBands, input, len);
}

/** {@link decode} into an i16 q: ERR_NARROW (to the host) at the first |value| past NARROW_MAX. */
export function decode16(q: usize, mag: usize, d: usize, n: usize, width: i32, nBands: i32, input: usize, len: usize): isize {
  return decodeQ<i16>(q, mag, d, n, width, nBands, input, len);
}

function decodeQ<Q>(q: usize, mag: usize, d: usize, n: usize, width: i32, nBands: i32, input: usize, len: usize): isize {
  memory.fill(q, 0, n << alignof<Q>());
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
    codeCoefficients<Dec, Q>(q, mag, d, width, nBands);
    codeOffsets<Dec>(2 * nBands);
  }
  return overrun ? -1 : <isize>(inPos - input);
}
