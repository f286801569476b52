/**
 * The net step of a group of positions as the wide-band pass reads it (banding-wide.ts): per line, the mean
 * of WINDOW pixels after the group minus the mean of WINDOW pixels before it, summarised robustly over the
 * lines, less what a smooth gradient beside the group adds between the two windows.
 *
 * References
 * - J. W. Tukey, "Exploratory Data Analysis", Addison-Wesley 1977: medians as robust summaries.
 */
import type { Lines } from './band-lines';
import { robustStep, windowDifferences } from './banding-wide-checks';
import { medianInPlace } from './medians';
import { MAD_TO_SIGMA } from './noise-estimate';

/** Pixels averaged on either side of a group for its net step (chosen here; at most GROUP_GAP). */
export const WINDOW = 4;
/**
 * The wide pass ignores steps closer to either end of a line than this (banding-wide.ts, with its share of
 * the line), so that both windows and the slope beside a group fit (chosen here: 2·WINDOW). It was 24 px, but
 * a line's last band is cut short by the image's end, so an edge there is as likely as anywhere: the
 * benchmark's row bands on page.png (191 rows, an edge of 15.6 at row 177) and text.png (172 rows, seed 8:
 * 12.4 at row 152) and the column bands of scikit-image's 102-px microaneurysms.png (8 of 8 seeds) were left
 * in place or half removed. Measured with 8 on 16 unseen scikit-image images × 2 axes × seeds 1–8: 101 → 110
 * of 256 cases ≥ 80 % removed, made worse 11 → 11; their clean check set (696 cases) changed the same 8 as
 * before. A step near the ends must pass the same checks (slices, densest half, level check) as elsewhere.
 */
export const MIN_BORDER = 2 * WINDOW;
/** Positions on either side of a group whose robust steps give the slope beside it (chosen here: LOCAL_OFFSET). */
const SLOPE_REACH = 12;
/** That slope is taken off only beyond this many of its standard errors from zero (chosen here: as STEP_SE). */
const SLOPE_SE = 5;
/** Standard error of a median over σ/√N for Gaussian data: √(π/2) (common practice). */
const MEDIAN_SE_FACTOR = 1.2533;

/**
 * The net step across a … b on the lines [from, to) (robustStep), and the per-line window steps `perLine`,
 * each less `tilt` (the slope beside the group over the distance between the windows: slopeBeside).
 */
export function groupStep(
  lines: Lines,
  a: number,
  b: number,
  from: number,
  to: number,
  scratch: Float64Array,
  tilt = 0,
) {
  const perLine = windowDifferences(lines.levels, lines.lineLen, WINDOW, a, b, from, to);
  if (tilt !== 0) for (let k = 0; k < perLine.length; k++) perLine[k] -= tilt;
  return { ...robustStep(perLine, 0, to - from, scratch), perLine };
}

/**
 * The slope the positions beside the group a … b share (the median of the robust steps `step` of the
 * SLOPE_REACH positions on either side), times the distance between the centres of the group's two windows:
 * what a smooth gradient alone adds to its net step. 0 unless that median lies beyond SLOPE_SE of its
 * standard errors from zero (from the neighbours' own scatter), so where the image is flat beside the
 * group, its step is read as before.
 */
export function slopeBeside(step: Float64Array, a: number, b: number, scratch: Float64Array): number {
  let m = 0;
  for (let x = Math.max(0, a - SLOPE_REACH); x < a; x++) scratch[m++] = step[x];
  for (let x = b + 1; x <= Math.min(step.length - 1, b + SLOPE_REACH); x++) scratch[m++] = step[x];
  if (m < SLOPE_REACH) return 0;
  const slope = medianInPlace(scratch, m);
  for (let i = 0; i < m; i++) scratch[i] = Math.abs(scratch[i] - slope);
  const sd = medianInPlace(scratch, m) / MAD_TO_SIGMA;
  return Math.abs(slope) > (SLOPE_SE * MEDIAN_SE_FACTOR * sd) / Math.sqrt(m) ? slope * (b - a + WINDOW) : 0;
}
