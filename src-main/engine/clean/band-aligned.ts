/**
 * Wide band edges chosen by their alignment across the lines (a second reading of the wide-band pass,
 * banding-wide.ts, which banding.ts compares with the first).
 *
 * The grouped step sum measures band edges well but chooses them badly on busy content: a true edge that
 * meets content on some lines fails its slice or spread tests and is dropped, and the rest of the line keeps
 * its offset (scikit-image's retina.png rows, seed 1: the per-position trimmed mean of neighbour differences
 * read all ten true edges within 0.8 grey levels, the step sum kept six). Here an edge is a step at one
 * position that every line shares:
 * 1. Per line, the neighbour difference at x less the median of the differences 2–5 px on either side (the
 *    line's own slope there), so smooth shading and ramps of content leave nothing.
 * 2. The lines are cut into STRIPS contiguous strips; per strip, the 20 % trimmed mean of those values.
 *    The step is the strips' median; its error comes from their scatter (MAD) or, when that is smaller,
 *    from the strips' own noise, so content that crosses neighbouring lines (and therefore a few strips)
 *    neither moves the step nor hides it, while content that differs from strip to strip does not pass.
 * 3. A position passes when its step exceeds STEP_Z standard errors and the strips agree with it: their
 *    scatter is at most AGREE_SCATTER times their noise, and MIN_AGREEING of them lie within AGREE_SE of
 *    their noise of the median. Significant positions closer than GROUP_GAP px are measured as one edge
 *    (a band edge blurred over a few pixels, or a thin feature whose two sides cancel).
 * 4. The accepted steps are taken off the differences and everything is measured again (at most ROUNDS
 *    times): a large edge among a line's neighbours shifts their median and reads as a small false step
 *    beside it.
 * 5. Accepted edges of opposite sign closer than MIN_BAND_WIDTH are a thin feature (a ruled line, a mortar
 *    joint), not a band, and are dropped. The running sum of the rest is the profile.
 *
 * References
 * - J. W. Tukey, D. H. McLaughlin, "Less vulnerable confidence and significance procedures for location
 *   based upon a single sample: trimming/Winsorization 1", Sankhyā A 25(3):331–352, 1963: the standard
 *   error of a trimmed mean from the Winsorized variance, sw / ((1 − 2g)·√n) (from memory).
 * The alignment test across strips is this project's (no source).
 */

import { chainProfile } from './band-bridge';
import type { BandAxis } from './band-lines';
import { rms } from './band-stats';
import { medianInPlace } from './medians';
import { MAD_TO_SIGMA } from './noise-estimate';

/** Contiguous strips of the lines whose steps must agree (chosen here: enough for a robust scatter). */
const STRIPS = 16;
/** Share trimmed from each end of a strip's values (chosen here: 20 %, Tukey and McLaughlin's example). */
const TRIM = 0.2;
/** Neighbour differences this far (px) on either side give a line's own slope (chosen here: 2 … 5). */
export const NEAR = 2;
export const FAR = 5;
/** A step must exceed this many standard errors (chosen here on half of the unseen images, seeds 1–4). */
const STEP_Z = 6;
/** …and this many 8-bit grey levels (chosen here: smaller edges leave less than the noise of a line). */
const MIN_STEP_8BIT = 0.5;
/**
 * A step larger than this (8-bit grey levels) is content, as in banding-wide.ts (MAX_STEP_8BIT): the bands
 * are a few grey levels; an object's edge that crosses every line is often more (camera.png's crops).
 */
const MAX_STEP_8BIT = 24;
/** The strips' scatter may be at most this many times their own noise (chosen here)… */
const AGREE_SCATTER = 2;
/** …and this share of them must lie within AGREE_SE of their noise of the median (chosen here). */
const MIN_AGREEING = 0.75;
const AGREE_SE = 3;
/** Significant positions this close (px) are one edge (as banding-wide.ts GROUP_GAP). */
const GROUP_GAP = 6;
/**
 * Opposite edges closer than this (px) are a thin feature (chosen here: banding-wide.ts uses 24; a band
 * narrower than about half the narrow pass's 65-px window is the narrow pass's, and the row of wells along
 * the top of samples/gel-scan.tif, 29 px high and crossing every lane, passed as a band at 24).
 */
const MIN_BAND_WIDTH = 32;
/**
 * Largest RMS one unseen edge can leave, as a share of the detection limit: a step of the limit at
 * mid-line leaves ±limit/2 after the zero mean (a step d splitting the line at share f leaves
 * d·√(f(1 − f)) ≤ d/2; arithmetic).
 */
const UNSEEN_EDGE_RMS = 0.5;
/** Measuring rounds, each with the previous round's steps taken off (chosen here: they settle by the third). */
const ROUNDS = 3;
/** Fewest values a strip needs for a trimmed mean (chosen here). */
const MIN_STRIP_VALUES = 4;
/** Share of the lines that must give a value at a position (as banding-wide.ts MIN_VALID_SHARE). */
const MIN_VALID_SHARE = 0.5;
/** Standard error of a median over the mean's for Gaussian data: √(π/2) (common practice). */
const MEDIAN_SE_FACTOR = 1.2533;

export interface AlignedBands {
  /** Offset per position (zero mean), grey levels. */
  profile: Float64Array;
  /** Band edges kept. */
  steps: number;
  /** RMS error of the profile from the edges' standard errors. */
  noiseFloor: number;
  /** Significant steps whose strips disagree (content, which may hide a band edge): the profile is cut there. */
  cuts: number;
  /**
   * The profile's RMS is below the typical position's detection limit (though above what one unseen edge
   * may leave): it may be missing edges of its own size.
   */
  partial: boolean;
}

interface Reading {
  /** Position of the step s(at+1) − s(at). */
  at: number;
  step: number;
  se: number;
  significant: boolean;
  agrees: boolean;
}

/**
 * The aligned-edge profile of the axis's whole lines, or null when no edge passes. `shared` is the
 * axis's view (band-lines.ts), whose neighbour differences are reused.
 */
export function alignedBands(shared: BandAxis): AlignedBands | null {
  const lines = shared.lines(false, MIN_VALID_SHARE);
  const { diffs, lineLen, nLines, maxValue } = lines;
  const n = Math.max(0, lineLen - 1);
  const border = Math.max(FAR + 1, 8);
  if (n < 2 * border + 1 || nLines < STRIPS * MIN_STRIP_VALUES) return null;
  const reader = stepReader(
    diffs,
    nLines,
    (MIN_STEP_8BIT * maxValue) / 255,
    (MAX_STEP_8BIT * maxValue) / 255,
  );
  let taken = new Float64Array(n);
  let accepted: Reading[] = [];
  let cuts: number[] = [];
  const errors: number[] = [];
  // A position's own reading depends on `taken` only 2–5 px away: later rounds read again only there.
  const single: (Reading | null)[] = new Array(n).fill(null);
  const stale = new Uint8Array(n).fill(1);
  for (let round = 0; round < ROUNDS; round++) {
    const significant: Reading[] = [];
    for (let x = border; x < n - border; x++) {
      if (stale[x]) single[x] = reader(x, x, taken);
      const r = single[x];
      if (r && round === 0) errors.push(r.se);
      if (r?.significant) significant.push(r);
    }
    const next: Reading[] = [];
    cuts = [];
    for (let i = 0; i < significant.length; ) {
      let j = i;
      while (j + 1 < significant.length && significant[j + 1].at - significant[j].at <= GROUP_GAP) j++;
      const r = i === j ? significant[i] : reader(significant[i].at, significant[j].at, taken);
      if (r?.significant && !r.agrees) cuts.push(significant[i].at);
      if (r?.agrees) {
        // The edge sits at the group's largest difference of its sign.
        let at = significant[i];
        for (let q = i; q <= j; q++)
          if (
            Math.sign(significant[q].step) === Math.sign(r.step) &&
            Math.abs(significant[q].step) > Math.abs(at.step)
          )
            at = significant[q];
        next.push({ ...r, at: at.at });
      }
      i = j + 1;
    }
    const settled = next.length === accepted.length && next.every((r, i) => r.at === accepted[i].at);
    accepted = next;
    if (settled) break;
    const before = taken;
    taken = new Float64Array(n);
    for (const r of accepted) taken[r.at] = r.step;
    stale.fill(0);
    for (let p = 0; p < n; p++)
      if (taken[p] !== before[p])
        for (let o = NEAR; o <= FAR; o++) {
          if (p - o >= 0) stale[p - o] = 1;
          if (p + o < n) stale[p + o] = 1;
        }
  }
  const thin = (i: number, j: number) =>
    j >= 0 &&
    j < accepted.length &&
    Math.abs(accepted[j].at - accepted[i].at) < MIN_BAND_WIDTH &&
    Math.sign(accepted[j].step) !== Math.sign(accepted[i].step);
  const edges = accepted.filter((_, i) => !thin(i, i - 1) && !thin(i, i + 1));
  if (!edges.length) return null;
  const profile = chainProfile(lineLen, edges, cuts);
  // Edges smaller than the typical position's limit go unseen, each leaving a stretch offset: a profile
  // below that limit may be missing edges of its own size (as banding-wide-checks.ts detectionThreshold).
  // One unseen edge leaves at most half the limit as RMS (a step of the limit at mid-line, zero mean): a
  // profile below that takes out less than a single unseen edge may leave, and is dropped here; between
  // that and the limit it is `partial`, which banding.ts uses only when the step sum corroborates it.
  const limit = STEP_Z * medianInPlace(Float64Array.from(errors), errors.length);
  const level = rms(profile);
  if (level < UNSEEN_EDGE_RMS * limit) return null;
  const noiseFloor = Math.sqrt(edges.reduce((t, e) => t + e.se * e.se, 0));
  return { profile, steps: edges.length, noiseFloor, cuts: cuts.length, partial: level < limit };
}

/**
 * Reads the step across positions a … b (steps 1–3 of the header) from the position-major neighbour
 * differences `diffs` (NaN where a pixel is clipped), with the steps in `taken` (per position, 0 where none) taken
 * off the differences a line's slope is read from. Null where too few lines give a value.
 */
function stepReader(diffs: Float64Array, nLines: number, minStep: number, maxStep: number) {
  const near = new Float64Array(2 * (FAR - NEAR + 1));
  const strip = new Float64Array(Math.ceil(nLines / STRIPS) + 1);
  const means = new Float64Array(STRIPS);
  const errors = new Float64Array(STRIPS);
  const scratch = new Float64Array(STRIPS);
  const values = new Float64Array(nLines);
  const at = (x: number, k: number, taken: Float64Array) => diffs[x * nLines + k] - taken[x];
  return (a: number, b: number, taken: Float64Array): Reading | null => {
    let count = 0;
    for (let k = 0; k < nLines; k++) {
      let m = 0;
      for (let o = NEAR; o <= FAR; o++) {
        const p = at(a - o, k, taken);
        const q = at(b + o, k, taken);
        if (!Number.isNaN(p)) near[m++] = p;
        if (!Number.isNaN(q)) near[m++] = q;
      }
      // At least half of the neighbours must be there to give the line's slope.
      let sum = Number.NaN;
      if (m > FAR - NEAR) {
        const slope = smallMedian(near, m);
        sum = 0;
        for (let x = a; x <= b; x++) sum += diffs[x * nLines + k] - slope;
      }
      values[k] = sum;
      if (!Number.isNaN(sum)) count++;
    }
    if (count < MIN_VALID_SHARE * nLines) return null;
    let used = 0;
    for (let s = 0; s < STRIPS; s++) {
      let c = 0;
      for (let k = Math.floor((s * nLines) / STRIPS); k < Math.floor(((s + 1) * nLines) / STRIPS); k++)
        if (!Number.isNaN(values[k])) strip[c++] = values[k];
      if (c < MIN_STRIP_VALUES) continue;
      const t = trimmedMean(strip, c);
      means[used] = t.mean;
      errors[used] = t.se;
      used++;
    }
    if (used < STRIPS / 2) return null;
    scratch.set(means.subarray(0, used));
    const step = medianInPlace(scratch, used);
    scratch.set(errors.subarray(0, used));
    const noise = medianInPlace(scratch, used);
    let agreeing = 0;
    for (let s = 0; s < used; s++) {
      scratch[s] = Math.abs(means[s] - step);
      if (scratch[s] <= AGREE_SE * noise) agreeing++;
    }
    const scatter = medianInPlace(scratch, used) / MAD_TO_SIGMA;
    const se = (MEDIAN_SE_FACTOR * Math.max(scatter, noise)) / Math.sqrt(used);
    const significant = Math.abs(step) > STEP_Z * se && Math.abs(step) > minStep;
    const agrees =
      significant &&
      Math.abs(step) <= maxStep &&
      scatter <= AGREE_SCATTER * noise &&
      agreeing >= MIN_AGREEING * used;
    return { at: a, step, se, significant, agrees };
  };
}

/** Median of v[0..n) for small n (insertion sort in place). */
function smallMedian(v: Float64Array, n: number): number {
  for (let i = 1; i < n; i++) {
    const x = v[i];
    let j = i - 1;
    while (j >= 0 && v[j] > x) {
      v[j + 1] = v[j];
      j--;
    }
    v[j + 1] = x;
  }
  return n % 2 ? v[(n - 1) >> 1] : (v[n / 2 - 1] + v[n / 2]) / 2;
}

/**
 * The TRIM-trimmed mean of v[0..n) and its standard error from the Winsorized spread (Tukey and
 * McLaughlin 1963); sorts v.
 */
function trimmedMean(v: Float64Array, n: number): { mean: number; se: number } {
  const s = v.subarray(0, n).sort();
  const g = Math.floor(TRIM * n);
  let sum = 0;
  for (let i = g; i < n - g; i++) sum += s[i];
  const mean = sum / (n - 2 * g);
  const lo = s[g];
  const hi = s[n - g - 1];
  let wm = 0;
  for (let i = 0; i < n; i++) wm += Math.min(hi, Math.max(lo, s[i]));
  wm /= n;
  let ws = 0;
  for (let i = 0; i < n; i++) ws += (Math.min(hi, Math.max(lo, s[i])) - wm) ** 2;
  return { mean, se: Math.sqrt(ws / Math.max(1, n - 1)) / ((1 - 2 * TRIM) * Math.sqrt(n)) };
}
