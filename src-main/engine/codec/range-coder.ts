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

const PROB_BITS = 15;
const PROB_ONE = 1 << PROB_BITS;
const PROB_INIT = PROB_ONE >>> 1;
const TOP = 2 ** 24;
/** Largest magnitude the integer coder accepts; bigger values mean a corrupt stream. */
const MAX_MAGNITUDE = 2 ** 30;

/**
 * Adaptation: two estimators of P(bit = 0), a fast one (window ≈ 16 observations) and a slow one
 * (≈ 128), averaged. Both start as a running frequency count (rate 1/(n + 1.5)) so fresh contexts
 * learn quickly.
 */
const FAST_WINDOW = 16;
const SLOW_WINDOW = 128;
const RECIP = Uint32Array.from({ length: SLOW_WINDOW }, (_, n) => Math.round(65536 / (n + 1.5)));

/** One adaptive binary context. */
export class BitModel {
  fast = PROB_INIT;
  slow = PROB_INIT;
  n = 0;
  p(): number {
    const v = (this.fast + this.slow) >>> 1;
    return v < 32 ? 32 : v > PROB_ONE - 32 ? PROB_ONE - 32 : v;
  }
  update(bit: number): void {
    const n = this.n;
    const rs = RECIP[n];
    const rf = n < FAST_WINDOW ? rs : RECIP[FAST_WINDOW - 1];
    if (n < SLOW_WINDOW - 1) this.n = n + 1;
    const target = bit ? 0 : PROB_ONE;
    // |(target − p)·r| < 2^15·2^16, so x / 65536 | 0 truncates toward zero exactly as Math.trunc does.
    this.fast += (((target - this.fast) * rf) / 65536) | 0;
    this.slow += (((target - this.slow) * rs) / 65536) | 0;
  }
}

export function models(n: number): BitModel[] {
  return Array.from({ length: n }, () => new BitModel());
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

export class RangeEncoder {
  private low = 0;
  private range = 0xffffffff;
  private cache = 0;
  private cacheSize = 1;
  private out = new ByteSink();

  encodeBit(m: BitModel, bit: number): void {
    const bound = (this.range >>> PROB_BITS) * m.p();
    if (bit) {
      this.low += bound;
      this.range = (this.range - bound) >>> 0;
    } else {
      this.range = bound >>> 0;
    }
    m.update(bit);
    while (this.range < TOP) {
      this.range = (this.range * 256) >>> 0;
      this.shiftLow();
    }
  }

  /** A bit with probability ½ (no model). */
  encodeDirect(bit: number): void {
    this.range = this.range >>> 1;
    if (bit) this.low += this.range;
    while (this.range < TOP) {
      this.range = (this.range * 256) >>> 0;
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

export class RangeDecoder {
  private range = 0xffffffff;
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
    if (this.overrun > 0) throw new RangeError(`${what} ends early (truncated or corrupt)`);
    if (this.pos !== this.data.length)
      throw new RangeError(
        `${what} has ${this.data.length - this.pos} unused bytes at its end (damaged, or the header does not match it)`,
      );
  }
  decodeBit(m: BitModel): number {
    const bound = (this.range >>> PROB_BITS) * m.p();
    let bit: number;
    if (this.code < bound) {
      this.range = bound >>> 0;
      bit = 0;
    } else {
      this.code = (this.code - bound) >>> 0;
      this.range = (this.range - bound) >>> 0;
      bit = 1;
    }
    m.update(bit);
    while (this.range < TOP) {
      this.range = (this.range * 256) >>> 0;
      this.code = ((this.code * 256) >>> 0) + this.next();
      this.code >>>= 0;
    }
    return bit;
  }
  decodeDirect(): number {
    this.range = this.range >>> 1;
    let bit = 0;
    if (this.code >= this.range) {
      this.code = (this.code - this.range) >>> 0;
      bit = 1;
    }
    while (this.range < TOP) {
      this.range = (this.range * 256) >>> 0;
      this.code = ((this.code * 256) >>> 0) + this.next();
      this.code >>>= 0;
    }
    return bit;
  }
}

/** Number of unary magnitude bins before the Exp-Golomb escape. */
const UNARY = 14;
const EG_BITS = 32;

/**
 * Contexts for one family of signed integers: `classes` selects a zero/magnitude context set (e.g. the
 * size of the previous value), and signs are modelled on the previous sign.
 */
export class IntModel {
  readonly zero: BitModel[];
  readonly sign: BitModel[];
  readonly unary: BitModel[];
  readonly egPrefix: BitModel[];
  readonly egBits: BitModel[];
  constructor(readonly classes: number) {
    this.zero = models(classes);
    this.sign = models(3 * classes);
    this.unary = models(classes * UNARY);
    this.egPrefix = models(EG_BITS);
    this.egBits = models(EG_BITS);
  }
}

/** Encode a signed integer with context class `cls` and previous sign `prevSign` (−1, 0, 1). */
export function encodeInt(enc: RangeEncoder, m: IntModel, v: number, cls: number, prevSign: number): void {
  if (v === 0) {
    enc.encodeBit(m.zero[cls], 0);
    return;
  }
  enc.encodeBit(m.zero[cls], 1);
  enc.encodeBit(m.sign[cls * 3 + prevSign + 1], v < 0 ? 1 : 0);
  encodeMagnitude(enc, m, Math.abs(v) - 1, cls);
}

export function decodeInt(dec: RangeDecoder, m: IntModel, cls: number, prevSign: number): number {
  if (!dec.decodeBit(m.zero[cls])) return 0;
  const neg = dec.decodeBit(m.sign[cls * 3 + prevSign + 1]);
  const mag = decodeMagnitude(dec, m, cls) + 1;
  return neg ? -mag : mag;
}

/** Encode a non-negative integer: unary bins up to UNARY, then an Exp-Golomb (order 0) escape. */
export function encodeMagnitude(enc: RangeEncoder, m: IntModel, a: number, cls: number): void {
  if (!(a >= 0 && a < MAX_MAGNITUDE)) throw new RangeError(`integer ${a} outside the coder's range`);
  const base = cls * UNARY;
  for (let i = 0; i < UNARY; i++) {
    if (a === i) {
      enc.encodeBit(m.unary[base + i], 0);
      return;
    }
    enc.encodeBit(m.unary[base + i], 1);
  }
  const r = a - UNARY + 1; // ≥ 1
  const nbits = 31 - Math.clz32(r);
  for (let i = 0; i < nbits; i++) enc.encodeBit(m.egPrefix[i], 1);
  enc.encodeBit(m.egPrefix[nbits], 0);
  for (let i = nbits - 1; i >= 0; i--) {
    const bit = (r >>> i) & 1;
    if (i === nbits - 1) enc.encodeBit(m.egBits[nbits], bit);
    else enc.encodeDirect(bit);
  }
}

export function decodeMagnitude(dec: RangeDecoder, m: IntModel, cls: number): number {
  const base = cls * UNARY;
  for (let i = 0; i < UNARY; i++) if (!dec.decodeBit(m.unary[base + i])) return i;
  let nbits = 0;
  while (dec.decodeBit(m.egPrefix[nbits])) {
    nbits++;
    if (nbits >= 30) throw new RangeError('corrupt integer code (Exp-Golomb prefix too long)');
  }
  let r = 1;
  for (let i = nbits - 1; i >= 0; i--) {
    const bit = i === nbits - 1 ? dec.decodeBit(m.egBits[nbits]) : dec.decodeDirect();
    r = r * 2 + bit;
  }
  return r + UNARY - 1;
}
