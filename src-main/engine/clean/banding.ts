/**
 * Row and column banding: detection (direction, strength, period) and removal as a rank-one component.
 * The profile of each axis and its detection test are in band-profile.ts; the wide bands (50–200 px) in
 * banding-wide.ts. Here: the order of the axes, the spikes of the automatic mode, and the subtraction.
 * An image in which nothing is detected is left exactly as it was.
 */

import { alignedBands } from './band-aligned';
import type { LineResiduals } from './band-gather';
import { type BandAxis, bandAxis } from './band-lines';
import {
  type BandingOptions,
  estimateStripeProfile,
  MAX_SPREAD_RATIO,
  MIN_PERIOD_SHARE,
  type StripeProfile,
} from './band-profile';
import { ruledSpikes } from './band-rules';
import { dominantPeriod, removeMean, rms } from './band-stats';
import { type WideBands, wideBandProfile } from './banding-wide';
import { addsVariation, explainedVariation } from './banding-wide-checks';
import { medianInPlace } from './medians';

export type { BandingOptions } from './band-profile';
export { dominantPeriod } from './band-stats';

type BandingDirection = 'none' | 'rows' | 'columns' | 'both';

/** In automatic mode, profile values beyond this many robust strengths are content, not banding. Fitted on: as SIGNIFICANCE (band-profile.ts). */
const SPIKE_FACTOR = 5;
/**
 * A spike carried by fewer than this share of the lines is content (chosen here: a ruled line or a map's
 * grid stops at the margins, which are more than 3 % of a page; a hot column with an offset of several noise
 * levels is carried by nearly every line). One carried by more is a sensor defect, removed whole, unless
 * band-rules.ts finds it is a printed line crossing a crop cut inside the margins.
 */
const FULL_SPAN = 0.97;
/**
 * Next to a content spike, offsets above this many robust strengths are its shoulders (chosen here: a sine
 * reaches 1.35 robust strengths and Gaussian stripes pass 2 in 5 % of positions).
 */
const SHOULDER_FACTOR = 2;
/**
 * The largest offset banding gives one position, in robust strengths (plus the noise floor): a printed
 * line's fitted offset at black must exceed it (band-rules.ts). Chosen here: 3, which Gaussian stripes
 * pass at 0.27 % of positions.
 */
const BANDING_REACH = 3;
/** Band edges a wide profile measured on the background needs away from text pages (as banding-wide.ts MIN_STEPS)… */
const MIN_WIDE_STEPS = 2;
/**
 * …unless its one edge is at least this many 8-bit grey levels (chosen here: clean text.png's rows gave a
 * single step of 3.5; the benchmark's wide bands with one edge found measured 9.0 and 11.5).
 */
const MIN_SINGLE_STEP_8BIT = 6;
/**
 * wideFirst only looks for wide bands under a narrow profile whose robust strength is at most this share of
 * the lines' own spread (band-profile.ts lineSpread). Beside a band edge much larger than the noise, the
 * running median (half-width 32) d px before the edge is the d-th largest of the 32 + d values on the low
 * side: its expected lag is 2.1 noise σ at d = 1, 0.9 at 8, 0.5 at 16 and 0 at 32 (expected normal order
 * statistics, Blom's approximation, G. Blom, "Statistical Estimates and Transformed Beta-Variables", Wiley
 * 1958; checked by simulation with numpy). Ramps alone therefore stay well below one spread at the median
 * position. Chosen here: 1. Measured on the benchmark's 80 wide-band cases (seeds 1–8) and its narrow
 * cases: the five where wideFirst changed the result had 0.21–0.26; samples/line-sensor-banding.png's
 * columns 1.78 and rows 2.05 (real banding, where wideFirst never changed the result and cost 35 % more
 * banding CPU).
 */
const MAX_RAMP_SPREAD = 1;

export interface BandingAnalysis {
  direction: BandingDirection;
  columns: StripeProfile;
  rows: StripeProfile;
  /** Which profiles are subtracted. */
  removeColumns: boolean;
  removeRows: boolean;
}

/**
 * Analyse one plane. Column stripes are estimated first; row stripes are then estimated on the
 * column-corrected plane (when columns are removed), so a grid of both does not confuse either.
 * `mode` 'auto' removes what is detected; 'rows'/'columns'/'both' remove what is asked for regardless.
 */
export function analyseBanding(
  plane: Float32Array,
  width: number,
  height: number,
  mode: 'auto' | 'rows' | 'columns' | 'both',
  options: BandingOptions,
): BandingAnalysis {
  // The narrow pass's line residuals serve the wide pass's background lines when both look at one plane.
  const kept: { r: LineResiduals | null } = { r: null };
  const keep = (r: LineResiduals) => {
    kept.r = r;
  };
  let columns = profileOf(plane, width, height, 'columns', options, keep);
  let removeColumns = mode === 'auto' ? columns.detected : mode === 'columns' || mode === 'both';
  if (mode === 'auto') clipSpikes(columns, kept.r, options.maxValue);
  const firstColumns =
    mode === 'auto' && removeColumns && wideFirst(plane, width, height, columns, options, kept.r);
  if (firstColumns) columns = firstColumns;
  // The planes the later steps look at have the tested profiles subtracted (StripeProfile.tested).
  let base = removeColumns ? subtractProfiles(plane, width, height, null, columns.tested) : plane;
  if (!firstColumns && (mode === 'auto' || mode === 'columns' || mode === 'both'))
    if (
      addWideBands(
        base,
        width,
        height,
        columns,
        removeColumns,
        options.maxValue,
        base === plane ? kept.r : null,
      )
    ) {
      base = subtractProfiles(plane, width, height, null, columns.tested);
      removeColumns = true;
    }
  kept.r = null;
  let rows = profileOf(base, width, height, 'rows', options, keep);
  if (mode === 'auto') clipSpikes(rows, kept.r, options.maxValue);
  let removeRows = mode === 'auto' ? rows.detected : mode === 'rows' || mode === 'both';
  const firstRows = mode === 'auto' && removeRows && wideFirst(base, width, height, rows, options, kept.r);
  if (firstRows) rows = firstRows;
  else if (mode === 'auto' || mode === 'rows' || mode === 'both') {
    const rest = removeRows ? subtractProfiles(base, width, height, rows.tested, null) : base;
    if (addWideBands(rest, width, height, rows, removeRows, options.maxValue, rest === base ? kept.r : null))
      removeRows = true;
  }
  const direction: BandingDirection =
    removeRows && removeColumns ? 'both' : removeRows ? 'rows' : removeColumns ? 'columns' : 'none';
  return { direction, columns, rows, removeColumns, removeRows };
}

/**
 * The profile of one axis; when it fails only because its spread across lines follows content (lines of
 * text), the profile of the background alone (band-profile.ts keepBackground) is tried, and kept if it
 * passes the whole detection test. `keep` receives the first estimate's line residuals.
 */
function profileOf(
  plane: Float32Array,
  width: number,
  height: number,
  axis: 'rows' | 'columns',
  options: BandingOptions,
  keep: (r: LineResiduals) => void,
): StripeProfile {
  const p = estimateStripeProfile(plane, width, height, axis, options, false, keep);
  if (p.detected || p.spreadRatio <= MAX_SPREAD_RATIO) return p;
  const bg = estimateStripeProfile(plane, width, height, axis, options, true);
  return bg.detected ? bg : p;
}

/**
 * Add the wide bands (banding-wide.ts) found in `rest` to the axis's profile `p`, in place, when the wide
 * pass detects them (its guards leave an image alone when the bands are uncertain; a forced axis does not
 * override them). Returns true when something was added. The report's strength and period then describe
 * the combined profile.
 */
function addWideBands(
  rest: Float32Array,
  width: number,
  height: number,
  p: StripeProfile,
  narrowRemoved: boolean,
  maxValue: number,
  known: LineResiduals | null,
): boolean {
  const paper = p.spreadRatio > MAX_SPREAD_RATIO;
  const wide = findWideBands(rest, width, height, p.axis, paper, maxValue, known, narrowRemoved);
  if (!wide) return false;
  mergeWide(p, wide, narrowRemoved);
  return true;
}

/**
 * The wide bands of one axis of `rest` (banding-wide.ts), or null when none pass its guards. Ink, lanes or
 * texture can hide band edges from the whole lines: the paper (the background alone,
 * banding-wide-checks.ts sampleLines) is tried next, on every image (before, only where the narrow profile
 * followed lines of text: on the benchmark's wide bands this found 28 of 40 cases against 22, none made
 * worse). Only when both step sums are rejected is the chained profile tried, in the same order. One edge
 * in the paper is enough on a text page (`paper`: the narrow profile followed lines of text); elsewhere a
 * single small step is as likely content (clean text.png's rows gave one of 3.5 grey levels), so it must
 * be large.
 */
function findWideBands(
  rest: Float32Array,
  width: number,
  height: number,
  axis: 'rows' | 'columns',
  paper: boolean,
  maxValue: number,
  known: LineResiduals | null,
  afterNarrow = false,
): WideBands | null {
  const shared = bandAxis(rest, width, height, axis, maxValue, known);
  let wide = wideBandProfile(rest, width, height, axis, maxValue, false, false, shared);
  for (const [background, chain] of [
    [true, false],
    [false, true],
    [true, true],
  ])
    if (!wide.detected) {
      wide = wideBandProfile(rest, width, height, axis, maxValue, background, chain, shared, paper);
      if (background && !paper && wide.steps < MIN_WIDE_STEPS && !largeStep(wide.profile, maxValue))
        wide.detected = false;
    }
  wide = alignedOrWide(shared, wide);
  // After narrow stripes were removed, `rest` holds their estimation error, whose steps a chain (which
  // passes without the level check when it is cut) took for band edges: page.png's column stripes RMS 8
  // gained two such edges, 93.3 % removed became 85.1 %. There the bands must at least not add variation.
  if (afterNarrow && wide.detected && addsVariation(shared.levels(), wide.profile)) return null;
  return wide.detected ? wide : null;
}

/**
 * The aligned-edge profile (band-aligned.ts) instead of the step sum's `wide` when it takes more total
 * variation out of the axis's direct levels (banding-wide-checks.ts explainedVariation): both read the
 * same edges where they agree, and where they differ, an edge the levels show is worth its size and one
 * they do not show costs it. When the step sum found nothing, the aligned profile must also hold
 * MIN_WIDE_STEPS edges and no cut (a single edge on grass.png's texture, two beside a doubtful step on
 * motorcycle_left.png, each with a true edge missed, made those scans worse). The step sum's own level
 * check (explainsLevels) is not asked for: it turned away two good cases on coffee.png's rows and changed
 * nothing on the clean set.
 * A `partial` aligned profile (its RMS below the detection limit, so it may lack edges of its own size) is
 * taken only when the step sum, which reads the edges independently, detected bands with as many edges:
 * the two readings then agree on how many edges there are. Where the step sum found more, a partial
 * profile of fewer edges took out more variation and less band (page.png rows, seed 8: one edge of two,
 * 98 % removed became 48 %); where it found fewer, the aligned reading's extra edges were not always
 * bands (motorcycle_left.png columns, seed 3: four edges against one, 3 % removed became −12 %).
 * Chosen on eight unseen scikit-image images × 2 axes × seeds 1–4 and checked on the other eight with
 * seeds 5–8 (the numbers are in this change's commit message).
 */
function alignedOrWide(shared: BandAxis, wide: WideBands): WideBands {
  const aligned = alignedBands(shared);
  if (!aligned) return wide;
  const levels = shared.levels();
  const gain = explainedVariation(levels, aligned.profile);
  if (wide.detected ? gain <= explainedVariation(levels, wide.profile) : gain <= 0) return wide;
  if (!wide.detected && (aligned.steps < MIN_WIDE_STEPS || aligned.cuts > 0)) return wide;
  if (aligned.partial && (!wide.detected || aligned.steps !== wide.steps)) return wide;
  const { profile, steps, noiseFloor } = aligned;
  return { profile, steps, strength: rms(profile), noiseFloor, detected: true };
}

/**
 * Add `wide` to the axis's profile `p` in place (to its narrow profile when `narrowRemoved`, else alone),
 * and to its tested profile.
 */
function mergeWide(p: StripeProfile, wide: WideBands, narrowRemoved: boolean) {
  for (const a of p.tested === p.profile ? [p.profile] : [p.profile, p.tested])
    for (let i = 0; i < a.length; i++) a[i] = (narrowRemoved ? a[i] : 0) + wide.profile[i];
  p.detected = true;
  p.wideSteps = wide.steps;
  p.strength = rms(p.profile);
  const { period, share } = dominantPeriod(p.profile);
  p.period = share >= MIN_PERIOD_SHARE ? period : null;
}

/**
 * The edges of a wide band on a sloping background leave a running median's residual a ramp on either
 * side (the median lags behind the step), which the narrow pass can take for narrow banding; its profile,
 * subtracted first, then cancels most of each edge and hides the bands from the wide pass (camera.png's
 * rows, benchmark seeds 4, 5 and 7: 2–17 % of the band energy removed). So when the narrow pass detects
 * something in automatic mode, the wide pass also looks at `base` itself; when it finds bands there, the
 * narrow pass is run again on what they leave, and the axis's profile is the sum (the narrow part only
 * when it is still detected). A narrow profile stronger than ramps can be (MAX_RAMP_SPREAD) skips this.
 * Returns that profile, or null when the wide pass finds nothing on `base` (or is skipped).
 */
function wideFirst(
  base: Float32Array,
  width: number,
  height: number,
  narrow: StripeProfile,
  options: BandingOptions,
  known: LineResiduals | null,
): StripeProfile | null {
  const { axis } = narrow;
  if (narrow.robustStrength > MAX_RAMP_SPREAD * narrow.lineSpread) return null;
  const paper = narrow.spreadRatio > MAX_SPREAD_RATIO;
  const wide = findWideBands(base, width, height, axis, paper, options.maxValue, known);
  if (!wide) return null;
  const rest =
    axis === 'rows'
      ? subtractProfiles(base, width, height, wide.profile, null)
      : subtractProfiles(base, width, height, null, wide.profile);
  const p = profileOf(rest, width, height, axis, options, () => {});
  if (p.detected) return null;
  mergeWide(p, wide, false);
  return p;
}

/** The profile has a step of at least MIN_SINGLE_STEP_8BIT between neighbouring positions. */
function largeStep(profile: Float64Array, maxValue: number): boolean {
  for (let x = 0; x + 1 < profile.length; x++)
    if (Math.abs(profile[x + 1] - profile[x]) >= (MIN_SINGLE_STEP_8BIT * maxValue) / 255) return true;
  return false;
}

/**
 * In automatic mode, positions where the profile exceeds SPIKE_FACTOR × its robust strength (plus the
 * noise floor) and that fewer than FULL_SPAN of the lines carry are content that crosses most but not all
 * lines (a ruled line, a grid line, the wells of a gel). An offset that every line carries is a printed line
 * when it fades where the level under it nears its ink (band-rules.ts; a crop cut inside the margins shows
 * its rules across every line), else a sensor defect (a hot or dead column), removed whole; faint lines
 * below the spike limit are told apart the same way. Content keeps its offset: the subtracted profile there
 * is interpolated linearly from the nearest positions that are not content, i.e. only the banding around it
 * is removed. `clipped` counts these. Forced modes (--banding rows|columns|both) subtract all.
 */
function clipSpikes(p: StripeProfile, lines: LineResiduals | null, maxValue: number) {
  const limit = SPIKE_FACTOR * p.robustStrength + p.noiseFloor;
  // The spikes are found on the tested profile (the one the limits were chosen on) and clipped in both.
  const t = p.tested;
  const centre = medianInPlace(Float64Array.from(t), t.length);
  const L = t.length;
  const content = new Uint8Array(L);
  let n = 0;
  for (let i = 0; i < L; i++)
    if (Math.abs(t[i] - centre) > limit && p.span[i] < FULL_SPAN) {
      content[i] = 1;
      n++;
    }
  // Printed lines that cross every line, and faint ones below the spike limit, are content too: the
  // offsets beyond the shoulder level not yet taken for content are checked by how they depend on the
  // level under them (band-rules.ts).
  const shoulder = SHOULDER_FACTOR * p.robustStrength + p.noiseFloor;
  if (lines && p.detected) {
    const candidates = t.map((v, i) => (!content[i] && Math.abs(v - centre) > shoulder ? 1 : 0));
    const reach = BANDING_REACH * p.robustStrength + p.noiseFloor;
    const rule = ruledSpikes(t, centre, Uint8Array.from(candidates), lines, { reach, limit }, maxValue);
    for (let i = 0; i < L; i++)
      if (rule[i]) {
        content[i] = 1;
        n++;
      }
  }
  // A content feature fades in over a few positions (a gel well, a blurred rule): its shoulders below the
  // spike limit belong to it, so the run grows while the offset stays above SHOULDER_FACTOR robust strengths.
  for (let pass = 0; pass < 2; pass++)
    for (let k = 0; k < L; k++) {
      const i = pass ? L - 1 - k : k;
      const prev = pass ? i + 1 : i - 1;
      if (!content[i] && prev >= 0 && prev < L && content[prev] && Math.abs(t[i] - centre) > shoulder) {
        content[i] = 1;
        n++;
      }
    }
  p.clipped = n;
  if (n === 0) return;
  for (const a of t === p.profile ? [t] : [t, p.profile]) bridge(a, content);
  if (p.detected) p.strength = rms(p.profile);
}

/** Replace the runs of `a` marked in `content` by straight lines between their neighbours, in place; zero mean. */
function bridge(a: Float64Array, content: Uint8Array) {
  const L = a.length;
  if (content.every((c) => c === 1)) {
    a.fill(0);
    return;
  }
  for (let i = 0; i < L; ) {
    if (!content[i]) {
      i++;
      continue;
    }
    let j = i;
    while (j < L && content[j]) j++;
    const lo = i > 0 ? a[i - 1] : a[j];
    const hi = j < L ? a[j] : lo;
    for (let k = i; k < j; k++) a[k] = lo + ((hi - lo) * (k - i + 1)) / (j - i + 1);
    i = j;
  }
  removeMean(a);
}
/** plane − b·1ᵀ − 1·sᵀ, as a new plane. Either profile may be null. */
export function subtractProfiles(
  plane: Float32Array,
  width: number,
  height: number,
  rowProfile: Float64Array | null,
  columnProfile: Float64Array | null,
): Float32Array {
  const out = new Float32Array(plane.length);
  for (let y = 0; y < height; y++) {
    const b = rowProfile ? rowProfile[y] : 0;
    const o = y * width;
    for (let x = 0; x < width; x++) out[o + x] = plane[o + x] - b - (columnProfile ? columnProfile[x] : 0);
  }
  return out;
}
