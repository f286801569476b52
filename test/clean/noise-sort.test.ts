// The comparator-free ordering of the noise level fit (src-main/engine/clean/noise-sort.ts): a stable radix
// sort on the float64 bit pattern, and a quickselect for percentiles. Reference values from numpy 1.24.2
// (/usr/bin/python3): np.argsort(k, kind='stable') and np.sort(k)[floor(q·n)]; and, on random data, the
// comparator sort `key[p] − key[q] || p − q` that the radix sort replaced.
import { describe, expect, it } from 'vitest';
import { rankValues, sortByKey } from '../../src-main/engine/clean/noise-sort';
import { rng } from './helpers';

const iota = (n: number) => Int32Array.from({ length: n }, (_, i) => i);
/** Keys of both signs, ±0, a subnormal, ±∞ and ties (the same list is given to numpy in the comments below). */
const mixed = () =>
  new Float64Array([3.5, -0, 2.25, -7, 3.5, 0, 1e300, -1e-300, 2.25, 5e-324, -Infinity, Infinity]);

describe('sortByKey (stable radix sort of indices by a float64 key)', () => {
  it('matches numpy 1.24.2 np.argsort(kind="stable") on signs, ±0, subnormals, ±∞ and ties', () => {
    const key = mixed();
    // np.argsort([3.5, -0.0, 2.25, -7.0, 3.5, 0.0, 1e300, -1e-300, 2.25, 5e-324, -inf, inf], kind='stable')
    expect(Array.from(sortByKey(iota(12), key))).toEqual([10, 3, 7, 1, 5, 9, 2, 8, 0, 4, 6, 11]);
  });

  it('gives the order of the comparator key[p] − key[q] || p − q on quarter-integer block means with many ties', () => {
    const r = rng(7);
    const n = 20000;
    const key = Float64Array.from({ length: n }, () => Math.floor(r() * 1021) / 4);
    const ids = iota(n).filter((i) => i % 3 !== 1);
    const want = Array.from(ids).sort((p, q) => key[p] - key[q] || p - q);
    expect(Array.from(sortByKey(ids, key))).toEqual(want);
  });

  it('gives the comparator order on continuous keys of both signs (every 16-bit digit pass runs)', () => {
    const r = rng(11);
    const n = 5000;
    const key = Float64Array.from({ length: n }, () => (r() - 0.3) * 1e4 * r());
    const ids = iota(n);
    const want = Array.from(ids).sort((p, q) => key[p] - key[q] || p - q);
    const got = sortByKey(ids, key);
    expect(Array.from(got)).toEqual(want);
    expect(Array.from(ids)).toEqual(Array.from(iota(n)));
  });

  it('handles the empty and one-element lists', () => {
    expect(sortByKey(new Int32Array(0), new Float64Array(0)).length).toBe(0);
    expect(Array.from(sortByKey(new Int32Array([2]), new Float64Array([9, 8, 7])))).toEqual([2]);
  });
});

describe('rankValues (percentiles by one numeric sort)', () => {
  it('matches numpy 1.24.2 np.sort(k)[floor(q·n)] at q = 0.05 and 0.95', () => {
    const key = mixed();
    // np.sort(k)[0] = -inf, np.sort(k)[11] = inf; and on the 4th–9th entries: np.sort([-7, 3.5, 0, 1e300, -1e-300, 2.25])[floor(0.5·6)] = 2.25
    expect(rankValues(iota(12), key, [0.05, 0.95])).toEqual([-Infinity, Infinity]);
    expect(rankValues(Int32Array.from([3, 4, 5, 6, 7, 8]), key, [0.5])).toEqual([2.25]);
  });

  it('reads only the listed ids, and q = 1 gives the largest of them', () => {
    const key = new Float64Array([9, 1, 8, 2, 7, 3]);
    // ids 1, 3, 5 hold 1, 2, 3: np.sort([1, 2, 3])[floor(q·3)] for q = 0, 0.5, 1 (clamped to index 2)
    expect(rankValues(Int32Array.from([1, 3, 5]), key, [0, 0.5, 1])).toEqual([1, 2, 3]);
  });
});
