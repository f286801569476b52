/**
 * The narrow stripe profile that is subtracted once the detection test has passed (band-profile.ts):
 * the same per-position median, measured on the background with the two content biases of the detection
 * profile taken out. The detection test itself is not run on this profile, so what is or is not detected
 * (and therefore every image left untouched) stays as it was.
 *
 * On dense text pages the detection profile carries the page's own structure (page.png, noise σ 3, no
 * stripes: a column profile of RMS 1.66 grey levels; stripes of RMS 3 were only 60 % removed), from:
 * 1. ink: residuals of strokes pull each position's median towards the ink. Only residuals within the
 *    background cut (band-profile.ts keepBackground) are used here (1.66 → 1.29).
 * 2. ink in the running median: where a line crosses text, the strokes in its window pull the running
 *    median down, so the paper beside them reads brighter, most where the text is densest (the rows of a
 *    line of text, for row banding). The running median is taken again over the background values alone.
 * 3. the ends of each line: the window is cut short there, so on a background that slopes along the line
 *    (a page lit from one side) the running median reads the level half a window inwards and the residuals
 *    of the first and last 32 positions carry the slope (page.png's columns: 59 % of the bias energy in
 *    the 17 % of positions at the ends). There the level is read off a robust line through the window
 *    (the medians of its two halves give the slope), which follows a slope as the centred median does.
 * Measured on page.png, noise σ 3 (stripes removed from the raw profile): column stripes RMS 3 60 → 81 %,
 * row banding period 12.5 RMS 4 78 → 90 % (on the background alone); camera, moon, text no worse.
 * A position where fewer than MIN_KEPT of the lines stay within the cut around 0 (a hot column, a stripe
 * far stronger than the noise) takes the cut around its whole-line median instead.
 */
import { interpolatedMedian } from './band-median';
import { removeMean } from './band-stats';
import { medianInPlace, runningMedian } from './medians';

/** Share of the lines that must stay within the background cut around 0 at a position (chosen here: a quarter). */
const MIN_KEPT = 0.25;
/** Background values a half-window needs for the end fit (chosen here); fewer keep the plain median. */
const MIN_HALF = 4;

/**
 * The refined profile (zero mean). `lines` line-major (gatherLines), `resid` their running-median
 * residuals position-major (resid[x·nLines + k], NaN where already left out), `cut` the background cut
 * (band-profile.ts backgroundCut), `raw` each position's whole-line median, `w` the
 * running median's half-width.
 */
export function refinedProfile(
  lines: Float64Array,
  resid: Float64Array,
  nLines: number,
  lineLen: number,
  w: number,
  cut: number,
  raw: Float64Array,
): Float64Array {
  const keep = new Uint8Array(resid.length);
  for (let x = 0; x < lineLen; x++) {
    const o = x * nLines;
    let n = 0;
    for (let k = 0; k < nLines; k++) n += keep[o + k] = Math.abs(resid[o + k]) <= cut ? 1 : 0;
    if (n < MIN_KEPT * nLines)
      for (let k = 0; k < nLines; k++) keep[o + k] = Math.abs(resid[o + k] - raw[x]) <= cut ? 1 : 0;
  }
  const again = new Float64Array(resid.length);
  const ok = new Uint8Array(lineLen);
  const med = new Float64Array(lineLen);
  const scratch = new Float64Array(2 * w + 1);
  const at = new Float64Array(2 * w + 1);
  for (let k = 0; k < nLines; k++) {
    const line = lines.subarray(k * lineLen, (k + 1) * lineLen);
    for (let x = 0; x < lineLen; x++) ok[x] = keep[x * nLines + k];
    runningMedian(line, w, med, ok);
    endFit(line, ok, w, med, scratch, at);
    for (let x = 0; x < lineLen; x++) again[x * nLines + k] = line[x] - med[x];
  }
  const profile = new Float64Array(lineLen);
  const col = new Float64Array(nLines);
  for (let x = 0; x < lineLen; x++) {
    const o = x * nLines;
    let n = 0;
    for (let k = 0; k < nLines; k++)
      if (keep[o + k] && Number.isFinite(again[o + k])) col[n++] = again[o + k];
    profile[x] = n >= 3 ? interpolatedMedian(col, n) : raw[x];
  }
  removeMean(profile);
  return profile;
}

/**
 * In the first and last w positions, where the window is cut short, the level at x is the median of
 * line[i] − slope·(i − x) over the window's background values, the slope joining the medians (of position
 * and of value) of the window's two halves: a robust line, exact on a straight slope as the centred median
 * is. Positions whose halves hold fewer than MIN_HALF background values keep `med`.
 */
function endFit(
  line: Float64Array,
  ok: Uint8Array,
  w: number,
  med: Float64Array,
  values: Float64Array,
  positions: Float64Array,
) {
  const L = line.length;
  if (L <= 2 * w) return;
  const half = (from: number, to: number) => {
    let n = 0;
    for (let i = from; i < to; i++)
      if (ok[i]) {
        values[n] = line[i];
        positions[n++] = i;
      }
    if (n < MIN_HALF) return null;
    return { level: medianInPlace(values, n), at: medianInPlace(positions, n) };
  };
  for (let j = 0; j < w; j++)
    for (const x of [j, L - 1 - j]) {
      const lo = Math.max(0, x - w);
      const hi = Math.min(L - 1, x + w);
      const mid = (lo + hi) / 2;
      const a = half(lo, Math.ceil(mid));
      const b = half(Math.floor(mid) + 1, hi + 1);
      if (!a || !b || b.at === a.at) continue;
      const slope = (b.level - a.level) / (b.at - a.at);
      let n = 0;
      for (let i = lo; i <= hi; i++) if (ok[i]) values[n++] = line[i] - slope * (i - x);
      med[x] = medianInPlace(values, n);
    }
}
