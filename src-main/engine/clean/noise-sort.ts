/**
 * Stable ordering of block indices by a floating-point key, without a comparator: a least-significant-digit
 * radix sort (16-bit digits) on the IEEE 754 bit pattern of the key, mapped so that unsigned order is numeric
 * order (sign bit set: all bits flipped; clear: sign bit flipped; common practice for radix-sorting floats).
 * Ties keep the order of the input, so input in increasing index order gives exactly the order of the
 * comparator `key[p] − key[q] || p − q` that it replaces (−0 is read as +0, as that comparator does). A pass
 * whose digit is the same for every element is skipped: keys that are multiples of ¼ or 1/36 of small integers
 * (the block means of 8- and 16-bit scans) share their low mantissa bits, so usually two or three passes run.
 * NaN keys are not expected (the keys come from finite pixel values).
 */

const DIGIT = 16;
const BUCKETS = 1 << DIGIT;

const bits = new Float64Array(1);
const words = new Uint32Array(bits.buffer);
/** Index of the high and low 32-bit word of a float64 on this platform (little- or big-endian). */
const HI = new Uint8Array(new Float64Array([1]).buffer)[7] === 0x3f ? 1 : 0;
const LO = 1 - HI;

/**
 * `ids` reordered by `key[id]`, ascending; ties in the order they come in `ids`. `ids` itself is left as it
 * was. Returns a new array of the same length.
 */
export function sortByKey(ids: Int32Array, key: Float64Array): Int32Array {
  const n = ids.length;
  const hi = new Uint32Array(n);
  const lo = new Uint32Array(n);
  for (let k = 0; k < n; k++) {
    bits[0] = key[ids[k]] + 0;
    const h = words[HI];
    const flip = h >>> 31 ? 0xffffffff : 0x80000000;
    hi[k] = (h ^ flip) >>> 0;
    lo[k] = (words[LO] ^ (h >>> 31 ? 0xffffffff : 0)) >>> 0;
  }
  let order = Int32Array.from(ids);
  let pos = new Int32Array(n);
  let keyHi = hi;
  let keyLo = lo;
  let nextHi = new Uint32Array(n);
  let nextLo = new Uint32Array(n);
  const count = new Int32Array(BUCKETS);
  for (let pass = 0; pass < 4; pass++) {
    const word = pass < 2 ? keyLo : keyHi;
    const shift = (pass & 1) * DIGIT;
    count.fill(0);
    for (let k = 0; k < n; k++) count[(word[k] >>> shift) & (BUCKETS - 1)]++;
    if (n === 0 || count[(word[0] >>> shift) & (BUCKETS - 1)] === n) continue;
    let sum = 0;
    for (let d = 0; d < BUCKETS; d++) {
      const c = count[d];
      count[d] = sum;
      sum += c;
    }
    for (let k = 0; k < n; k++) {
      const d = (word[k] >>> shift) & (BUCKETS - 1);
      const to = count[d]++;
      pos[to] = order[k];
      nextHi[to] = keyHi[k];
      nextLo[to] = keyLo[k];
    }
    [order, pos] = [pos, order];
    [keyHi, nextHi] = [nextHi, keyHi];
    [keyLo, nextLo] = [nextLo, keyLo];
  }
  return order;
}

/**
 * The values at ranks ⌊q·n⌋ (0-based, clamped to n − 1) of `key[id]` over `ids`, for each q in `qs`: the
 * values the sorted order would give there, from one numeric sort of a copy of the keys (a typed-array sort
 * without a comparator).
 */
export function rankValues(ids: Int32Array, key: Float64Array, qs: number[]): number[] {
  const n = ids.length;
  const v = new Float64Array(n);
  for (let k = 0; k < n; k++) v[k] = key[ids[k]];
  v.sort();
  return qs.map((q) => v[Math.min(n - 1, Math.floor(q * n))]);
}
