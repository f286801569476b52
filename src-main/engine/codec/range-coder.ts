/**
 * Adaptive binary range coder with context-modelled integer binarisation.
 *
 * The carry-less byte-wise range coder with a cache byte follows the structure published with the
 * LZMA SDK (I. Pavlov, public domain, "RangeEnc_ShiftLow"; from memory) and G. N. N. Martin, "Range
 * encoding: an algorithm for removing redundancy from a digitised message", IERE Data Recording
 * Conference, Southampton, 1979. Probabilities are 15-bit; each context averages a fast and a slow
 * adaptive estimate (windows of 16 and 128 observations), both starting as frequency counts (common practice). Integers are binarised as a zero flag, a sign and a
 * unary-then-Exp-Golomb magnitude, each bin with its own adaptive context, in the spirit of CABAC
 * (Marpe, Schwarz, Wiegand, IEEE TCSVT 13(7), 2003).
 */

import {
  CTX,
  EG_BITS,
  EG_PREFIX_LIMIT,
  FAST_WINDOW,
  MAX_MAGNITUDE,
  PROB_BITS,
  PROB_INIT,
  PROB_MARGIN,
  PROB_ONE,
  SLOW_WINDOW,
  UNARY,
} from './wasm/coder-constants';

/**
 * Adaptation: two estimators of P(bit = 0), a fast one (window ≈ FAST_WINDOW observations) and a slow one
 * (≈ SLOW_WINDOW), averaged. Both start as a running frequency count (rate 1/(n + 1.5)) so fresh contexts
 * learn quickly. Rates are 16-bit fixed point, indexed by the observation count.
 */
export const RECIP_SLOW = Int32Array.from({ length: SLOW_WINDOW }, (_, n) => Math.round(65536 / (n + 1.5)));
export const RECIP_FAST = Int32Array.from(RECIP_SLOW, (r, n) =>
  n < FAST_WINDOW ? r : RECIP_SLOW[FAST_WINDOW - 1],
);

/** The message of a magnitude the integer coder cannot code. */
export const magnitudeRangeMessage = (a: number) => `integer ${a} outside the coder's range`;
export const EG_PREFIX_MESSAGE = 'corrupt integer code (Exp-Golomb prefix too long)';

/**
 * A set of adaptive binary contexts in one typed array, {@link CTX} integers per context: the fast estimate,
 * the slow estimate and the observation count (capped at SLOW_WINDOW − 1). Context j starts at j·CTX.
 * Hot loops index it directly, with no object per context.
 */
export type Contexts = Int32Array;

/** `n` fresh contexts (P(0) = ½, no observations). */
export function contexts(n: number): Contexts {
  const s = new Int32Array(CTX * n);
  for (let k = 0; k < s.length; k += CTX) {
    s[k] = PROB_INIT;
    s[k + 1] = PROB_INIT;
  }
  return s;
}

/** P(bit = 0) of the context at offset k, 15-bit, kept PROB_MARGIN away from 0 and 1. */
function prob(s: Contexts, k: number): number {
  const v = (s[k] + s[k + 1]) >>> 1;
  return v < PROB_MARGIN ? PROB_MARGIN : v > PROB_ONE - PROB_MARGIN ? PROB_ONE - PROB_MARGIN : v;
}

/** Move the context at offset k towards the observed bit. */
function adapt(s: Contexts, k: number, bit: number): void {
  const n = s[k + 2];
  const rf = RECIP_FAST[n];
  const rs = RECIP_SLOW[n];
  if (n < SLOW_WINDOW - 1) s[k + 2] = n + 1;
  const target = bit ? 0 : PROB_ONE;
  const f = s[k];
  const sl = s[k + 1];
  // |(target − p)·r| < 2^15·2^16, so x / 65536 | 0 truncates toward zero exactly as Math.trunc does.
  s[k] = f + ((((target - f) * rf) / 65536) | 0);
  s[k + 1] = sl + ((((target - sl) * rs) / 65536) | 0);
}

/** One adaptive binary context: a handle on context `at` of a {@link Contexts} set. */
export class BitModel {
  constructor(
    readonly set: Contexts,
    readonly at: number,
  ) {}
}

/** `n` fresh contexts as handles (for callers that pass contexts one by one). */
export function models(n: number): BitModel[] {
  const s = contexts(n);
  return Array.from({ length: n }, (_, i) => new BitModel(s, i));
}

/**
 * Either direction of the range coder behind one interface, so one routine can walk the symbols for both:
 * the encoder writes `v` and returns it; the decoder ignores `v` and returns what it decodes.
 */
export interface BinaryCoder {
  /** A bit on context j of `set`. */
  bit(set: Contexts, j: number, v: number): number;
  /** A non-negative integer ({@link encodeMagnitude}). */
  magnitude(m: IntModel, v: number, cls: number): number;
  /** A signed integer ({@link encodeInt}). */
  int(m: IntModel, v: number, cls: number, prevSign: number): number;
}

/** Growable byte sink. */
class ByteSink {
  buf = new Uint8Array(1 << 12);
  length = 0;
  push(b: number) {
    if (this.length === this.buf.length) {
      const nb = new Uint8Array(this.buf.length * 2);
      nb.set(this.buf);
      this.buf = nb;
    }
    this.buf[this.length++] = b;
  }
  bytes(): Uint8Array {
    return this.buf.slice(0, this.length);
  }
}

/**
 * Both directions keep `range` as the 32-bit pattern of the unsigned range in a signed int32 (so V8 stores a
 * small integer, never a boxed double): r >>> n and r >>> 24 === 0 (range < 2^24) read it as unsigned, and
 * (r − bound) | 0, bound | 0 and r << 8 give the patterns of the unsigned results, which all lie in [0, 2^32).
 */
export class RangeEncoder implements BinaryCoder {
  private low = 0;
  private range = -1;
  private cache = 0;
  private cacheSize = 1;
  private out = new ByteSink();

  encodeBit(m: BitModel, bit: number): void {
    this.bit(m.set, m.at, bit);
  }

  bit(set: Contexts, j: number, bit: number): number {
    const k = j * CTX;
    const r = this.range;
    // (r >>> 15)·p < 2^32 is exact in a double; `| 0` keeps its low 32 bits (see `range`).
    const bound = (r >>> PROB_BITS) * prob(set, k);
    let next: number;
    if (bit) {
      this.low += bound;
      next = (r - bound) | 0;
    } else next = bound | 0;
    adapt(set, k, bit);
    while (next >>> 24 === 0) {
      next <<= 8;
      this.shiftLow();
    }
    this.range = next;
    return bit;
  }

  magnitude(m: IntModel, v: number, cls: number): number {
    encodeMagnitude(this, m, v, cls);
    return v;
  }

  int(m: IntModel, v: number, cls: number, prevSign: number): number {
    encodeInt(this, m, v, cls, prevSign);
    return v;
  }

  /** A bit with probability ½ (no model). */
  encodeDirect(bit: number): void {
    this.range = this.range >>> 1;
    if (bit) this.low += this.range;
    while (this.range >>> 24 === 0) {
      this.range <<= 8;
      this.shiftLow();
    }
  }

  private shiftLow(): void {
    if (this.low < 0xff000000 || this.low >= 0x100000000) {
      const carry = this.low >= 0x100000000 ? 1 : 0;
      let temp = this.cache;
      do {
        this.out.push((temp + carry) & 0xff);
        temp = 0xff;
      } while (--this.cacheSize !== 0);
      this.cache = Math.floor(this.low / 0x1000000) & 0xff;
    }
    this.cacheSize++;
    this.low = (this.low % 0x1000000) * 256;
  }

  finish(): Uint8Array {
    for (let i = 0; i < 5; i++) this.shiftLow();
    return this.out.bytes();
  }
}

export class RangeDecoder implements BinaryCoder {
  private range = -1;
  private code = 0;
  private pos = 0;
  /** Bytes read past the end (a sign of a corrupt or truncated stream). */
  overrun = 0;
  constructor(private readonly data: Uint8Array) {
    for (let i = 0; i < 5; i++) this.code = ((this.code * 256) >>> 0) + this.next();
    this.code >>>= 0;
  }
  private next(): number {
    if (this.pos < this.data.length) return this.data[this.pos++];
    this.overrun++;
    return 0;
  }
  /**
   * Check that the stream was read exactly to its end. The decoder reads 5 bytes, then one per
   * renormalisation; the encoder writes one byte per renormalisation plus 5 at `finish` (the first being the
   * initial cache byte), so a decoder that took the encoder's path reads every byte and none past the end
   * (derived from the coder above). Anything else means a damaged stream or a header that does not match it.
   * @throws RangeError naming `what`
   */
  checkEnd(what: string): void {
    checkStreamEnd(what, this.overrun > 0 ? -1 : this.pos, this.data.length);
  }
  decodeBit(m: BitModel): number {
    return this.bit(m.set, m.at);
  }
  bit(set: Contexts, j: number, _v?: number): number {
    const k = j * CTX;
    const r = this.range;
    const bound = (r >>> PROB_BITS) * prob(set, k);
    let bit: number;
    let next: number;
    if (this.code < bound) {
      next = bound | 0;
      bit = 0;
    } else {
      this.code = (this.code - bound) >>> 0;
      next = (r - bound) | 0;
      bit = 1;
    }
    adapt(set, k, bit);
    while (next >>> 24 === 0) {
      next <<= 8;
      this.code = ((this.code * 256) >>> 0) + this.next();
      this.code >>>= 0;
    }
    this.range = next;
    return bit;
  }
  magnitude(m: IntModel, _v: number, cls: number): number {
    return decodeMagnitude(this, m, cls);
  }
  int(m: IntModel, _v: number, cls: number, prevSign: number): number {
    return decodeInt(this, m, cls, prevSign);
  }
  decodeDirect(): number {
    this.range = this.range >>> 1;
    let bit = 0;
    if (this.code >= this.range) {
      this.code = (this.code - this.range) >>> 0;
      bit = 1;
    }
    while (this.range >>> 24 === 0) {
      this.range <<= 8;
      this.code = ((this.code * 256) >>> 0) + this.next();
      this.code >>>= 0;
    }
    return bit;
  }
}

/**
 * The end check of {@link RangeDecoder.checkEnd} for a decoder that read `pos` bytes of `length` (−1: it read
 * past the end).
 * @throws RangeError naming `what`
 */
export function checkStreamEnd(what: string, pos: number, length: number): void {
  if (pos < 0) throw new RangeError(`${what} ends early (truncated or corrupt)`);
  if (pos !== length)
    throw new RangeError(
      `${what} has ${length - pos} unused bytes at its end (damaged, or the header does not match it)`,
    );
}

/**
 * Contexts for one family of signed integers: `classes` selects a zero/magnitude context set (e.g. the
 * size of the previous value), and signs are modelled on the previous sign.
 */
export class IntModel {
  readonly zero: Contexts;
  readonly sign: Contexts;
  readonly unary: Contexts;
  readonly egPrefix: Contexts;
  readonly egBits: Contexts;
  constructor(readonly classes: number) {
    this.zero = contexts(classes);
    this.sign = contexts(3 * classes);
    this.unary = contexts(classes * UNARY);
    this.egPrefix = contexts(EG_BITS);
    this.egBits = contexts(EG_BITS);
  }
}

/** Encode a signed integer with context class `cls` and previous sign `prevSign` (−1, 0, 1). */
export function encodeInt(enc: RangeEncoder, m: IntModel, v: number, cls: number, prevSign: number): void {
  if (v === 0) {
    enc.bit(m.zero, cls, 0);
    return;
  }
  enc.bit(m.zero, cls, 1);
  enc.bit(m.sign, cls * 3 + prevSign + 1, v < 0 ? 1 : 0);
  encodeMagnitude(enc, m, Math.abs(v) - 1, cls);
}

export function decodeInt(dec: RangeDecoder, m: IntModel, cls: number, prevSign: number): number {
  if (!dec.bit(m.zero, cls)) return 0;
  const neg = dec.bit(m.sign, cls * 3 + prevSign + 1);
  const mag = decodeMagnitude(dec, m, cls) + 1;
  return neg ? -mag : mag;
}

/** Encode a non-negative integer: unary bins up to UNARY, then an Exp-Golomb (order 0) escape. */
export function encodeMagnitude(enc: RangeEncoder, m: IntModel, a: number, cls: number): void {
  if (!(a >= 0 && a < MAX_MAGNITUDE)) throw new RangeError(magnitudeRangeMessage(a));
  const base = cls * UNARY;
  const u = m.unary;
  const stop = a < UNARY ? a : UNARY;
  for (let i = 0; i < stop; i++) enc.bit(u, base + i, 1);
  if (a < UNARY) {
    enc.bit(u, base + a, 0);
    return;
  }
  const r = a - UNARY + 1; // ≥ 1
  const nbits = 31 - Math.clz32(r);
  for (let i = 0; i < nbits; i++) enc.bit(m.egPrefix, i, 1);
  enc.bit(m.egPrefix, nbits, 0);
  for (let i = nbits - 1; i >= 0; i--) {
    const bit = (r >>> i) & 1;
    if (i === nbits - 1) enc.bit(m.egBits, nbits, bit);
    else enc.encodeDirect(bit);
  }
}

export function decodeMagnitude(dec: RangeDecoder, m: IntModel, cls: number): number {
  const base = cls * UNARY;
  for (let i = 0; i < UNARY; i++) if (!dec.bit(m.unary, base + i)) return i;
  let nbits = 0;
  while (dec.bit(m.egPrefix, nbits)) {
    nbits++;
    if (nbits >= EG_PREFIX_LIMIT) throw new RangeError(EG_PREFIX_MESSAGE);
  }
  let r = 1;
  for (let i = nbits - 1; i >= 0; i--) {
    const bit = i === nbits - 1 ? dec.bit(m.egBits, nbits) : dec.decodeDirect();
    r = r * 2 + bit;
  }
  return r + UNARY - 1;
}
