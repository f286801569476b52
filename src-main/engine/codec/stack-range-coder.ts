/**
 * Adaptive binary range coder with 11-bit probabilities, used by the stack layout's plane coder.
 *
 * The arithmetic is the carry-propagating range coder of G. N. N. Martin, "Range encoding: an algorithm
 * for removing redundancy from a digitised message", IERE Data Recording Conference, Southampton,
 * 1979, in the binary adaptive form whose probability update is p ← p ± (2048 − p or p) >> 5 (a
 * well-known construction, here from memory). Pure TypeScript; no dependency.
 */

const TOP = 0x1000000;
const PROB_BITS = 11;
const PROB_ONE = 1 << PROB_BITS;
const ADAPT_SHIFT = 5;

/** A set of adaptive bit models, all starting at p(0) = 1/2. */
export function bitModels(count: number): Uint16Array {
  return new Uint16Array(count).fill(PROB_ONE >> 1);
}

export class RangeEncoder {
  private low = 0;
  private range = 0xffffffff;
  private cache = 0;
  private cacheSize = 1;
  private buf = new Uint8Array(4096);
  private len = 0;

  private push(b: number) {
    if (this.len === this.buf.length) {
      const nb = new Uint8Array(this.buf.length * 2);
      nb.set(this.buf);
      this.buf = nb;
    }
    this.buf[this.len++] = b;
  }

  private shiftLow() {
    const lo32 = this.low % 0x100000000;
    if (lo32 < 0xff000000 || this.low >= 0x100000000) {
      const carry = this.low >= 0x100000000 ? 1 : 0;
      let temp = this.cache;
      do {
        this.push((temp + carry) & 0xff);
        temp = 0xff;
      } while (--this.cacheSize !== 0);
      this.cache = Math.floor(lo32 / TOP) & 0xff;
    }
    this.cacheSize++;
    this.low = (lo32 % TOP) * 256;
  }

  /** Code one bit with the adaptive model `models[i]`. */
  bit(models: Uint16Array, i: number, bit: number): void {
    const p = models[i];
    const bound = (this.range >>> PROB_BITS) * p;
    if (bit === 0) {
      this.range = bound;
      models[i] = p + ((PROB_ONE - p) >> ADAPT_SHIFT);
    } else {
      this.low += bound;
      this.range -= bound;
      models[i] = p - (p >> ADAPT_SHIFT);
    }
    while (this.range < TOP) {
      this.range = (this.range * 256) >>> 0;
      this.shiftLow();
    }
  }

  /** Flush and return the coded bytes. */
  finish(): Uint8Array {
    for (let i = 0; i < 5; i++) this.shiftLow();
    return this.buf.slice(0, this.len);
  }
}

export class RangeDecoder {
  private code = 0;
  private range = 0xffffffff;
  private pos = 0;
  constructor(private readonly bytes: Uint8Array) {
    for (let i = 0; i < 5; i++) this.code = (this.code * 256 + this.next()) % 0x100000000;
  }
  private next(): number {
    return this.pos < this.bytes.length ? this.bytes[this.pos++] : 0;
  }
  /** True when the decoder has read past the end of its input by more than the coder's 4-byte tail. */
  get overrun(): boolean {
    return this.pos > this.bytes.length + 4;
  }
  bit(models: Uint16Array, i: number): number {
    const p = models[i];
    const bound = (this.range >>> PROB_BITS) * p;
    let b: number;
    if (this.code < bound) {
      this.range = bound;
      models[i] = p + ((PROB_ONE - p) >> ADAPT_SHIFT);
      b = 0;
    } else {
      this.code -= bound;
      this.range -= bound;
      models[i] = p - (p >> ADAPT_SHIFT);
      b = 1;
    }
    while (this.range < TOP) {
      this.range = (this.range * 256) >>> 0;
      this.code = (this.code * 256 + this.next()) % 0x100000000;
    }
    return b;
  }
}

/** Number of models an {@link encodeUInt} context needs. */
export const UINT_MODELS = 49;

/**
 * Adaptive Elias-gamma code of v ≥ 0 (Elias, IEEE Trans. Inf. Theory 21(2), 1975): the length of v+1
 * in unary with one model per position, then its bits below the leading one, the top four with models.
 */
export function encodeUInt(enc: RangeEncoder, models: Uint16Array, base: number, v: number): void {
  const x = v + 1;
  const n = 31 - Math.clz32(x);
  for (let i = 0; i < n; i++) enc.bit(models, base + Math.min(i, 23), 1);
  if (n < 24) enc.bit(models, base + n, 0);
  else if (n < 31) enc.bit(models, base + 23, 0);
  for (let i = n - 1; i >= 0; i--) {
    const b = (x >>> i) & 1;
    if (n - 1 - i < 4) enc.bit(models, base + 24 + (Math.min(n, 6) - 1) * 4 + (n - 1 - i), b);
    else enc.bit(models, base + 48, b);
  }
}

export function decodeUInt(dec: RangeDecoder, models: Uint16Array, base: number): number {
  let n = 0;
  while (n < 24 && dec.bit(models, base + n) === 1) n++;
  if (n >= 24) {
    // Lengths ≥ 24 continue in unary on the last model (values ≥ 2^24 are far beyond any quantised sample).
    while (n < 31 && dec.bit(models, base + 23) === 1) n++;
  }
  let x = 1;
  for (let i = n - 1; i >= 0; i--) {
    const b =
      n - 1 - i < 4
        ? dec.bit(models, base + 24 + (Math.min(n, 6) - 1) * 4 + (n - 1 - i))
        : dec.bit(models, base + 48);
    x = x * 2 + b;
  }
  return x - 1;
}
