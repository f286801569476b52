/**
 * The candidate search's size model: estimated code lengths (bits) of quantised vector entries, from a
 * context-conditioned empirical entropy (the entry's magnitude class given the previous entry's). The
 * whole-scan search (./candidate) and the bounded-memory packed store (./packed-order) count entries the
 * same way, so both give the same table and the same greedy order.
 */

/** Magnitudes at and above this share one escape code (plus an Elias-gamma-like length for the excess). */
const ESC = 16;

/** Context of an entry: the previous entry's magnitude class, 0, 1, 2 or 3+. */
function magClass(a: number): number {
  return a < 3 ? a : 3;
}

/** Fresh counts: [magnitude class of the previous entry][magnitude, ESC for ≥ ESC], each started at 0.5. */
export function newCounts(): Float64Array[] {
  return Array.from({ length: 4 }, () => new Float64Array(ESC + 1).fill(0.5));
}

/** Count entries q[from] … q[from + len − 1], from a previous magnitude of 0 (counts are integers + 0.5: exact in any order). */
export function countVector(counts: Float64Array[], q: ArrayLike<number>, from: number, len: number): void {
  let prev = 0;
  for (let j = 0; j < len; j++) {
    const a = Math.abs(q[from + j]);
    counts[magClass(prev)][a < ESC ? a : ESC]++;
    prev = a;
  }
}

/** Code lengths (bits) from counts: −log₂ of the frequency, plus a sign bit for a non-zero magnitude. */
export function codeLengths(counts: Float64Array[]): Float64Array[] {
  return counts.map((row) => {
    const total = row.reduce((s, x) => s + x, 0);
    return row.map((x, a) => -Math.log2(x / total) + (a > 0 ? 1 : 0));
  });
}

/** Estimated bits of one vector's entries (q[from] … q[from + len − 1]) under a table from {@link codeLengths}. */
export function vectorBits(q: Int32Array, table: Float64Array[], from = 0, len = q.length): number {
  let bits = 0;
  let prev = 0;
  for (let j = from; j < from + len; j++) {
    const a = Math.abs(q[j]);
    bits += table[magClass(prev)][a < ESC ? a : ESC];
    if (a >= ESC) bits += 2 * Math.log2(a - ESC + 2) + 1;
    prev = a;
  }
  return bits;
}
