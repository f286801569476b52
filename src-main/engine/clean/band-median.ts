/**
 * The median of values that lie on the grid of whole grey levels, interpolated within the tied middle value.
 *
 * The banding profile is a median over lines of (pixel − running median); for integer samples these
 * residuals are whole numbers, so a plain median is itself a whole number and moves in steps of one grey
 * level. On a smooth scan with noise of a few grey levels that rounding alone gives a "profile" of RMS
 * about one level, which passes the significance test and, when subtracted, adds its own error (samples/
 * gel-scan.tif, noise σ 3: −0.6 dB). Treating each whole value v as the bin [v − ½, v + ½) and
 * interpolating within it gives a median that varies continuously with the data.
 *
 * References
 * - The median of grouped data, L + (N/2 − F)/f · h (L: lower bound of the median's bin, F: count below it,
 *   f: count in it, h: bin width); a standard formula of descriptive statistics (from memory; e.g.
 *   G. U. Yule & M. G. Kendall, "An Introduction to the Theory of Statistics", Griffin, ch. 7).
 */
import { medianInPlace } from './medians';

/** Width of the bin a tied value stands for: one grey level (8- and 16-bit samples are whole numbers). */
const GRID_STEP = 1;

/**
 * Median of a[0..n) that interpolates within a run of values equal to the middle one, as the median of data
 * rounded to whole grey levels; with no tie at the middle it is the ordinary median. Reorders a.
 */
export function interpolatedMedian(a: Float64Array, n: number): number {
  if (n < 3) return medianInPlace(a, n);
  const m = medianInPlace(a, n);
  let below = 0;
  let tied = 0;
  for (let i = 0; i < n; i++) {
    if (a[i] < m) below++;
    else if (a[i] === m) tied++;
  }
  if (tied < 2) return m;
  return m - GRID_STEP / 2 + (GRID_STEP * (n / 2 - below)) / tied;
}
