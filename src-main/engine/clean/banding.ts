/**
 * Row and column banding: detection (direction, strength, period) and removal as a rank-one component.
 *
 * A pure column-stripe pattern is the rank-one matrix 1·sᵀ (a row pattern is b·1ᵀ). The profile s is
 * estimated robustly so that real edges and text are not taken for stripes:
 * 1. along each sampled line, subtract a running median (a robust high-pass: it follows edges and
 *    illumination but not narrow stripes);
 * 2. take, at each position, the median of these residuals across lines. Content varies from line to
 *    line and is rejected; a stripe is the same on every line and survives.
 * Detection asks for three things: the profile is well above its own estimation noise, the profiles of
 * the two halves of the image agree (content differs between halves, stripes do not), and its RMS is at
 * least a fraction of a grey level. An image that fails is left exactly as it was.
 *
 * References
 * - J. W. Tukey, "Exploratory Data Analysis", Addison-Wesley 1977: running medians as robust smoothers.
 * - Median-based destriping of line-scanner images, e.g. Ch. Rakwatin, W. Takeuchi, Y. Yasuoka,
 *   "Stripe noise reduction in MODIS data by combining histogram matching with facet filter",
 *   IEEE Trans. Geosci. Remote Sens. 45(6):1844–1856, 2007 (column statistics matched across detectors;
 *   cited for the idea of per-column statistics, from memory).
 * - The standard error of a sample median of N Gaussian values, √(π/2)·σ/√N (asymptotic; common
 *   statistical fact, from memory), used for the significance test.
 */
import { interpolatedMedian } from './band-median';
import { dominantPeriod, removeMean, rms, sharedEnergy } from './band-stats';
import { wideBandProfile } from './banding-wide';
import { medianInPlace, runningMedian } from './medians';

export { dominantPeriod } from './band-stats';

import { MAD_TO_SIGMA } from './noise-estimate';

type BandingAxis = 'rows' | 'columns';
type BandingDirection = 'none' | 'rows' | 'columns' | 'both';

interface StripeProfile {
  axis: BandingAxis;
  /** Offset per row (axis rows, length height) or per column (axis columns, length width), zero mean. */
  profile: Float64Array;
  /** RMS of the profile in grey levels of the input. */
  strength: number;
  /** 1.4826·median|profile|: the strength of the bulk of the profile, insensitive to a few spikes. */
  robustStrength: number;
  /** RMS standard error of the median profile (from the spread across lines at each position). */
  noiseFloor: number;
  /** ⟨top-half profile, bottom-half profile⟩ / ‖profile‖², clamped to [−1, 1] (1 = the same stripes in both halves). */
  consistency: number;
  /** Spread across lines where the profile is strongest over where it is weakest (≈ 1 for additive stripes). */
  spreadRatio: number;
  /** Dominant period in pixels, or null when no single frequency dominates. */
  period: number | null;
  /** Fraction of the profile's energy within ±1 bin of the spectral peak. */
  periodShare: number;
  /** Per position, the share of lines that carry at least half of its offset (see lineSpan). */
  span: Float64Array;
  /** Positions whose offset was left as content by the spike limit (automatic mode). */
  clipped?: number;
  /** True when the detection test passed. */
  detected: boolean;
  /** Band edges added by the wide pass (banding-wide.ts), when it added any. */
  wideSteps?: number;
}

export interface BandingOptions {
  /** Largest sample value (255 or 65535); scales the minimum strength. */
  maxValue: number;
  /** Half-width of the running median, in pixels. Default 32: stripes narrower than ~32 px are caught. */
  halfWindow?: number;
}

/** Lines sampled for the profile (enough for a median error of ~0.06σ; more costs time for nothing). */
const MAX_SAMPLE_LINES = 512;
/** Default half-width of the running median along each line. */
const DEFAULT_HALF_WINDOW = 32;
/**
 * Minimum robust strength of a detected profile, in 8-bit grey levels. Below one grey level a stripe pattern is
 * hardly visible and removing it gains little (at most 10·log10(1 + 1/σ²) dB, 0.5 dB at noise σ = 3), while
 * content taken for it costs as much: the lanes of samples/gel-scan.tif (a profile of about 0.6 levels that
 * is the same in both halves) lost 0.55 dB at σ = 3 when this was 0.3 (chosen here).
 */
const MIN_STRENGTH_8BIT = 1;
/**
 * The robust strength must exceed this many times the noise floor. Fitted on: the clean images of
 * test/fixtures/images and samples/ (3 leaves every one untouched) and the striped cases of
 * test/clean/banding.test.ts (moon, camera and text with synthetic stripes; page for text lines).
 */
const SIGNIFICANCE = 3;
/** Minimum correlation between the two halves' profiles. Fitted on: as SIGNIFICANCE. */
const MIN_CONSISTENCY = 0.5;
/**
 * Largest spread ratio of a detected profile: above it, the "stripes" follow content (text lines, edges).
 * Fitted on: as SIGNIFICANCE (the text-heavy page.png and text.png set the ceiling).
 */
const MAX_SPREAD_RATIO = 1.8;
/** In automatic mode, profile values beyond this many robust strengths are content, not banding. Fitted on: as SIGNIFICANCE. */
const SPIKE_FACTOR = 5;
/**
 * A spike carried by at least this share of the lines is a sensor defect and is removed whole; one carried
 * by fewer is content (chosen here: a ruled line or a map's grid stops at the margins, which are more than
 * 3 % of a page; a hot column with an offset of several noise levels is carried by nearly every line).
 */
const FULL_SPAN = 0.97;
/** A period is reported when the spectral peak (±1 bin) holds at least this share of the energy. */
const MIN_PERIOD_SHARE = 0.3;
/** √(π/2): standard error of a median relative to the mean's, for Gaussian data. */
const MEDIAN_SE_FACTOR = 1.2533141373155003;

/** Estimate the stripe profile of one axis and run the detection test. */
function estimateStripeProfile(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  axis: BandingAxis,
  options: BandingOptions,
): StripeProfile {
  // For column stripes the "lines" are rows (we look along x); for row stripes they are columns.
  const lineLen = axis === 'columns' ? width : height;
  const lineCount = axis === 'columns' ? height : width;
  const nLines = Math.min(lineCount, MAX_SAMPLE_LINES);
  const w = Math.max(2, Math.min(options.halfWindow ?? DEFAULT_HALF_WINDOW, Math.floor(lineLen / 4)));
  // Residuals stored position-major (resid[x·nLines + k]) so each position's values are contiguous.
  const resid = new Float64Array(nLines * lineLen);
  const line = new Float64Array(lineLen);
  const med = new Float64Array(lineLen);
  for (let k = 0; k < nLines; k++) {
    const li = nLines === lineCount ? k : Math.floor(((k + 0.5) * lineCount) / nLines);
    if (axis === 'columns') for (let x = 0; x < lineLen; x++) line[x] = plane[li * width + x];
    else for (let x = 0; x < lineLen; x++) line[x] = plane[x * width + li];
    runningMedian(line, w, med);
    for (let x = 0; x < lineLen; x++) resid[x * nLines + k] = line[x] - med[x];
  }
  const half = nLines >> 1;
  const profile = new Float64Array(lineLen);
  const top = new Float64Array(lineLen);
  const bottom = new Float64Array(lineLen);
  const col = new Float64Array(nLines);
  for (let x = 0; x < lineLen; x++) {
    const o = x * nLines;
    col.set(resid.subarray(o, o + half));
    top[x] = interpolatedMedian(col, half);
    col.set(resid.subarray(o + half, o + nLines));
    bottom[x] = interpolatedMedian(col, nLines - half);
    col.set(resid.subarray(o, o + nLines));
    profile[x] = interpolatedMedian(col, nLines);
  }
  const span = lineSpan(resid, profile, nLines);
  removeMean(profile);
  removeMean(top);
  removeMean(bottom);
  // Spread of the residuals around the profile at each position → standard error of each median. Content
  // such as lines of text is bimodal (ink or paper) exactly where it leaks into the profile, so its
  // positions get a large standard error; an additive stripe leaves the spread unchanged.
  let se2 = 0;
  const spread = new Float64Array(lineLen);
  for (let x = 0; x < lineLen; x++) {
    const o = x * nLines;
    for (let k = 0; k < nLines; k++) col[k] = Math.abs(resid[o + k] - profile[x]);
    spread[x] = medianInPlace(col, nLines) / MAD_TO_SIGMA;
    se2 += spread[x] * spread[x];
  }
  const noiseFloor = (MEDIAN_SE_FACTOR * Math.sqrt(se2 / lineLen)) / Math.sqrt(nLines);
  // Uniformity: spread where the profile is strongest (top quarter of |profile|) over spread where it is
  // weakest (bottom half). ≈ 1 for an additive stripe; ≫ 1 when the "profile" is content such as text lines.
  const order = Array.from({ length: lineLen }, (_, i) => i).sort(
    (a, b) => Math.abs(profile[b]) - Math.abs(profile[a]) || a - b,
  );
  const q = Math.max(1, Math.floor(lineLen / 4));
  const h2 = Math.max(1, Math.floor(lineLen / 2));
  let topS = 0;
  let lowS = 0;
  for (let i = 0; i < q; i++) topS += spread[order[i]] ** 2;
  for (let i = lineLen - h2; i < lineLen; i++) lowS += spread[order[i]] ** 2;
  const spreadRatio = lowS > 0 ? Math.sqrt(topS / q / (lowS / h2)) : topS > 0 ? Number.POSITIVE_INFINITY : 1;
  const strength = rms(profile);
  // Energy shared by the two halves relative to the profile's energy: stripes are common to both halves,
  // content leaking into either half's median is not (and one busy half does not veto a real stripe).
  const consistency = sharedEnergy(top, bottom, profile);
  const { period, share } = dominantPeriod(profile);
  // Robust strength 1.4826·median|profile| (MAD scale): a few full-length straight lines of the scene (a map
  // grid, a neatline, a table rule) make isolated spikes in the profile that pass every other test; they
  // barely move the median, whereas real banding affects most lines.
  // Measured around the profile's median, not its mean: spikes shift the mean of everything else.
  const centre = medianInPlace(Float64Array.from(profile), profile.length);
  const absP = Float64Array.from(profile, (v) => Math.abs(v - centre));
  const robustStrength = medianInPlace(absP, absP.length) / MAD_TO_SIGMA;
  const minStrength = (MIN_STRENGTH_8BIT * options.maxValue) / 255;
  const detected =
    robustStrength >= minStrength &&
    robustStrength >= SIGNIFICANCE * noiseFloor &&
    consistency >= MIN_CONSISTENCY &&
    spreadRatio <= MAX_SPREAD_RATIO;
  return {
    axis,
    profile,
    strength,
    robustStrength,
    noiseFloor,
    consistency,
    spreadRatio,
    period: share >= MIN_PERIOD_SHARE ? period : null,
    periodShare: share,
    span,
    detected,
  };
}

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
  const columns = estimateStripeProfile(plane, width, height, 'columns', options);
  let removeColumns = mode === 'auto' ? columns.detected : mode === 'columns' || mode === 'both';
  if (mode === 'auto') clipSpikes(columns);
  let base = removeColumns ? subtractProfiles(plane, width, height, null, columns.profile) : plane;
  if (mode === 'auto' || mode === 'columns' || mode === 'both')
    if (addWideBands(base, width, height, columns, removeColumns, options.maxValue)) {
      base = subtractProfiles(plane, width, height, null, columns.profile);
      removeColumns = true;
    }
  const rows = estimateStripeProfile(base, width, height, 'rows', options);
  if (mode === 'auto') clipSpikes(rows);
  let removeRows = mode === 'auto' ? rows.detected : mode === 'rows' || mode === 'both';
  if (mode === 'auto' || mode === 'rows' || mode === 'both') {
    const rest = removeRows ? subtractProfiles(base, width, height, rows.profile, null) : base;
    if (addWideBands(rest, width, height, rows, removeRows, options.maxValue)) removeRows = true;
  }
  const direction: BandingDirection =
    removeRows && removeColumns ? 'both' : removeRows ? 'rows' : removeColumns ? 'columns' : 'none';
  return { direction, columns, rows, removeColumns, removeRows };
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
): boolean {
  const wide = wideBandProfile(rest, width, height, p.axis, maxValue);
  if (!wide.detected) return false;
  for (let i = 0; i < p.profile.length; i++)
    p.profile[i] = (narrowRemoved ? p.profile[i] : 0) + wide.profile[i];
  p.detected ||= wide.detected;
  p.wideSteps = wide.steps;
  p.strength = rms(p.profile);
  const { period, share } = dominantPeriod(p.profile);
  p.period = share >= MIN_PERIOD_SHARE ? period : null;
  return true;
}

/**
 * In automatic mode, positions where the profile exceeds SPIKE_FACTOR × its robust strength (plus the
 * noise floor) are checked: an offset carried by nearly every line (FULL_SPAN) is a sensor defect (a hot or
 * dead column) and is removed whole; otherwise it is content that crosses most but not all lines (a ruled
 * line, a grid line, the wells of a gel) and keeps its offset: the subtracted profile there is interpolated
 * linearly from the nearest positions that are not spikes, i.e. only the banding around it is removed.
 * `clipped` counts these. Forced modes (--banding rows|columns|both) subtract all.
 */
function clipSpikes(p: StripeProfile) {
  const limit = SPIKE_FACTOR * p.robustStrength + p.noiseFloor;
  const centre = medianInPlace(Float64Array.from(p.profile), p.profile.length);
  const L = p.profile.length;
  const content = new Uint8Array(L);
  let n = 0;
  for (let i = 0; i < L; i++)
    if (Math.abs(p.profile[i] - centre) > limit && p.span[i] < FULL_SPAN) {
      content[i] = 1;
      n++;
    }
  p.clipped = n;
  if (n === 0) return;
  if (n === L) {
    p.profile.fill(0);
    return;
  }
  for (let i = 0; i < L; ) {
    if (!content[i]) {
      i++;
      continue;
    }
    let j = i;
    while (j < L && content[j]) j++;
    const a = i > 0 ? p.profile[i - 1] : p.profile[j];
    const b = j < L ? p.profile[j] : a;
    for (let k = i; k < j; k++) p.profile[k] = a + ((b - a) * (k - i + 1)) / (j - i + 1);
    i = j;
  }
  removeMean(p.profile);
  if (p.detected) p.strength = rms(p.profile);
}

/**
 * Per position x, the share of lines whose residual has the sign of the raw median offset m(x) and at least
 * half its size (lines whose residual is not finite are left out). An additive stripe is carried by every
 * line (≈ 1 once it is a few noise levels); content that crosses part of the lines is carried by that part.
 */
function lineSpan(resid: Float64Array, raw: Float64Array, nLines: number): Float64Array {
  const out = new Float64Array(raw.length);
  for (let x = 0; x < raw.length; x++) {
    const m = raw[x];
    const o = x * nLines;
    let hit = 0;
    for (let k = 0; k < nLines; k++) {
      const r = resid[o + k];
      if ((m >= 0 ? r >= m / 2 : r <= m / 2) && m !== 0) hit++;
    }
    out[x] = hit / nLines;
  }
  return out;
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
