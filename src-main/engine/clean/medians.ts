/**
 * Medians for the banding detector: a running median along a line (a robust high-pass) and the median of
 * an array by quickselect.
 *
 * References
 * - J. W. Tukey, "Exploratory Data Analysis", Addison-Wesley 1977: running medians as robust smoothers.
 * - C. A. R. Hoare, "Algorithm 65: FIND", Commun. ACM 4(7):321–322, 1961: selection by partitioning.
 */

/**
 * Running median with a window [x−w, x+w] clipped to the line, via a sorted sliding window. With `ok`, only
 * the values with ok[i] = 1 count (NaN where the window holds none).
 */
export function runningMedian(line: Float64Array, w: number, out: Float64Array, ok?: Uint8Array): void {
  const L = line.length;
  const win = new Float64Array(2 * w + 1);
  let n = 0;
  /** First index of the sorted window whose value is ≥ v (binary search). */
  const lowerBound = (v: number) => {
    let lo = 0;
    let hi = n;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (win[mid] < v) lo = mid + 1;
      else hi = mid;
    }
    return lo;
  };
  const insert = (i: number) => {
    if (ok && !ok[i]) return;
    const lo = lowerBound(line[i]);
    win.copyWithin(lo + 1, lo, n);
    win[lo] = line[i];
    n++;
  };
  const remove = (i: number) => {
    if (ok && !ok[i]) return;
    const lo = lowerBound(line[i]);
    win.copyWithin(lo, lo + 1, n);
    n--;
  };
  for (let x = 0; x <= Math.min(w, L - 1); x++) insert(x);
  for (let x = 0; x < L; x++) {
    out[x] = n === 0 ? Number.NaN : n % 2 ? win[(n - 1) >> 1] : (win[n / 2 - 1] + win[n / 2]) / 2;
    if (x - w >= 0) remove(x - w);
    if (x + w + 1 < L) insert(x + w + 1);
  }
}

/** Median of a[0..n) by quickselect (Hoare's FIND, CACM 4(7), 1961); reorders a. */
export function medianInPlace(a: Float64Array, n: number): number {
  if (n === 0) return 0;
  const k = n >> 1;
  const hi = select(a, 0, n - 1, k);
  if (n % 2) return hi;
  // Lower middle: the largest value left of k after selection.
  let lo = a[0];
  for (let i = 1; i < k; i++) if (a[i] > lo) lo = a[i];
  return (lo + hi) / 2;
}

/** Hoare's FIND on a[left0..right0]: a[k] holds the k-th smallest, smaller values before it, larger after. */
export function select(a: Float64Array, left0: number, right0: number, k: number): number {
  let left = left0;
  let right = right0;
  while (right > left) {
    const pivot = a[(left + right) >> 1];
    let i = left;
    let j = right;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) right = j;
    else if (k >= i) left = i;
    else return a[k];
  }
  return a[k];
}
