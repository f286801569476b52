/**
 * Wide bands: stripes wider than the narrow pass's running median can see (about 30 px and up, to the
 * whole line), removed as the same rank-one pattern b·1ᵀ or 1·sᵀ.
 *
 * A running median keeps edges, so a band wider than its window leaves no residual; and a wide window
 * would take smooth illumination and large content for bands. The wide pass therefore looks at the band
 * edges instead: a band profile s is piecewise constant, so its differences s(x+1) − s(x) are a few steps,
 * the same on every line. At each position the median over lines of the differences of neighbouring
 * pixels estimates that step; content edges that cross fewer than half the lines drop out of the median,
 * and smooth illumination gives differences far below the step threshold. Only steps that are significant
 * (STEP_SE standard errors of the median), of the same sign and similar size in each quarter of the lines,
 * and not accompanied by a wider spread across lines (a content edge is rarely the same on every line)
 * are kept; their running sum is the profile.
 *
 * References
 * - J. W. Tukey, "Exploratory Data Analysis", Addison-Wesley 1977: medians as robust summaries.
 * - The standard error of a sample median, √(π/2)·σ/√N for Gaussian data (asymptotic; common statistical
 *   fact, from memory), as in banding.ts.
 * The step-sum construction is this project's (no source).
 */
import { removeMean, rms } from './banding';
import { medianInPlace } from './medians';
import { MAD_TO_SIGMA } from './noise-estimate';

const MAX_SAMPLE_LINES = 512;
/** A step must exceed this many standard errors of its median (chosen here: 5 keeps white noise out). */
const STEP_SE = 5;
/** The lines are split into this many parts (chosen here)… */
const PARTS = 4;
/** …and each part's step must have the same sign and at least this share of the whole step (chosen here). */
const PART_AGREEMENT = 0.5;
/** Spread across lines at a step over the typical spread: above this the edge is content (chosen here; banding.ts uses 1.8 for whole profiles). */
const MAX_STEP_SPREAD = 1.4;
/** Minimum RMS of a wide profile in 8-bit grey levels (as the narrow pass). */
const MIN_STRENGTH_8BIT = 0.3;
/**
 * A band has two edges; a single step across the whole image is as likely a horizon, a page edge or an
 * illumination boundary (content), so at least two are needed (chosen here).
 */
const MIN_STEPS = 2;
/** Bands narrower than this are the narrow pass's (its window is 65 px; chosen here). */
const MIN_BAND_WIDTH = 24;
/** Steps closer to either end of the line than this share of it (or MIN_BAND_WIDTH) are ignored (chosen here). */
const BORDER_SHARE = 0.03;
/** Same-sign steps this close are one edge spread over neighbouring pixels (a soft band edge; chosen here). */
const EDGE_SPREAD = 2;
/**
 * The profile must remove at least this share of its own total variation from the direct per-position
 * levels (chosen here): a missed edge would leave a whole stretch offset, which adds variation instead.
 */
const MIN_TV_EXPLAINED = 0.75;
/** √(π/2). */
const MEDIAN_SE_FACTOR = 1.2533141373155003;

export interface WideBands {
  /** Offset per position (zero mean), grey levels. */
  profile: Float64Array;
  /** Positions x where a step s(x+1) − s(x) was kept. */
  steps: number;
  strength: number;
  /** RMS error of the profile from the steps' standard errors. */
  noiseFloor: number;
  detected: boolean;
}

/** The wide-band profile of one axis of `plane` ('columns': offsets per column; 'rows': per row). */
export function wideBandProfile(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  axis: 'rows' | 'columns',
  maxValue: number,
): WideBands {
  const lineLen = axis === 'columns' ? width : height;
  const lineCount = axis === 'columns' ? height : width;
  const nLines = Math.min(lineCount, MAX_SAMPLE_LINES);
  const diffs = new Float64Array(Math.max(0, lineLen - 1) * nLines);
  for (let k = 0; k < nLines; k++) {
    const li = nLines === lineCount ? k : Math.floor(((k + 0.5) * lineCount) / nLines);
    for (let x = 0; x + 1 < lineLen; x++) {
      const a = axis === 'columns' ? plane[li * width + x] : plane[x * width + li];
      const b = axis === 'columns' ? plane[li * width + x + 1] : plane[(x + 1) * width + li];
      diffs[x * nLines + k] = b - a;
    }
  }
  const col = new Float64Array(nLines);
  const step = new Float64Array(Math.max(0, lineLen - 1));
  const se = new Float64Array(step.length);
  const spread = new Float64Array(step.length);
  const agree = new Uint8Array(step.length);
  for (let x = 0; x < step.length; x++) {
    const o = x * nLines;
    col.set(diffs.subarray(o, o + nLines));
    const m = medianInPlace(col, nLines);
    let ok = 1;
    for (let q = 0; q < PARTS && ok; q++) {
      const a = Math.floor((q * nLines) / PARTS);
      const b = Math.floor(((q + 1) * nLines) / PARTS);
      col.set(diffs.subarray(o + a, o + b));
      const part = medianInPlace(col, b - a);
      if (Math.sign(part) !== Math.sign(m) || Math.abs(part) < PART_AGREEMENT * Math.abs(m)) ok = 0;
    }
    agree[x] = ok;
    for (let k = 0; k < nLines; k++) col[k] = Math.abs(diffs[o + k] - m);
    spread[x] = medianInPlace(col, nLines) / MAD_TO_SIGMA;
    se[x] = (MEDIAN_SE_FACTOR * spread[x]) / Math.sqrt(nLines);
    step[x] = m;
  }
  const typicalSpread = medianInPlace(Float64Array.from(spread), spread.length);
  const kept = new Uint8Array(step.length);
  // Steps next to the ends of the line are a plate rebate, a scan-bed edge or a page margin: content.
  const border = Math.max(MIN_BAND_WIDTH, Math.round(BORDER_SHARE * lineLen));
  for (let x = border; x < step.length - border; x++)
    kept[x] =
      Math.abs(step[x]) > STEP_SE * se[x] && agree[x] === 1 && spread[x] <= MAX_STEP_SPREAD * typicalSpread
        ? 1
        : 0;
  // A band edge stands alone: another step within MIN_BAND_WIDTH px (other than the same edge spread over
  // EDGE_SPREAD px) makes a thin feature (a ruled line, a grid line, a narrow stripe) or a periodic pattern
  // (the narrow pass's job, or content). Such steps are dropped.
  const thin = new Uint8Array(step.length);
  for (let x = 0; x < step.length; x++)
    if (kept[x])
      for (let d = 1; d < MIN_BAND_WIDTH && x + d < step.length; d++)
        if (kept[x + d] && (d > EDGE_SPREAD || Math.sign(step[x + d]) !== Math.sign(step[x])))
          thin[x] = thin[x + d] = 1;
  const profile = new Float64Array(lineLen);
  let steps = 0;
  let err2 = 0;
  for (let x = 0; x < step.length; x++) {
    const keep = kept[x] === 1 && thin[x] === 0;
    if (keep) {
      steps++;
      err2 += se[x] * se[x];
    }
    profile[x + 1] = profile[x] + (keep ? step[x] : 0);
  }
  removeMean(profile);
  const strength = rms(profile);
  const noiseFloor = Math.sqrt(err2);
  const detected =
    steps >= MIN_STEPS &&
    strength >= (MIN_STRENGTH_8BIT * maxValue) / 255 &&
    strength >= 3 * noiseFloor &&
    explainsLevels(plane, width, height, axis, profile);
  return { profile, steps, strength, noiseFloor, detected };
}

/**
 * Check the step-sum profile s against the direct levels c(x) = median over lines of (pixel − the line's
 * median): real bands are in c, so subtracting s removes their edges and the total variation falls by about
 * TV(s); a profile that integrated a content edge without its partner adds a step, and the variation rises.
 */
function explainsLevels(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  axis: 'rows' | 'columns',
  s: Float64Array,
): boolean {
  const lineLen = s.length;
  const lineCount = axis === 'columns' ? height : width;
  const nLines = Math.min(lineCount, MAX_SAMPLE_LINES);
  const vals = new Float64Array(lineLen * nLines);
  const line = new Float64Array(lineLen);
  for (let k = 0; k < nLines; k++) {
    const li = nLines === lineCount ? k : Math.floor(((k + 0.5) * lineCount) / nLines);
    for (let x = 0; x < lineLen; x++)
      line[x] = axis === 'columns' ? plane[li * width + x] : plane[x * width + li];
    const m = medianInPlace(Float64Array.from(line), lineLen);
    for (let x = 0; x < lineLen; x++) vals[x * nLines + k] = line[x] - m;
  }
  const c = new Float64Array(lineLen);
  const col = new Float64Array(nLines);
  for (let x = 0; x < lineLen; x++) {
    col.set(vals.subarray(x * nLines, (x + 1) * nLines));
    c[x] = medianInPlace(col, nLines);
  }
  let tvC = 0;
  let tvRest = 0;
  let tvS = 0;
  for (let x = 0; x + 1 < lineLen; x++) {
    tvC += Math.abs(c[x + 1] - c[x]);
    tvRest += Math.abs(c[x + 1] - s[x + 1] - c[x] + s[x]);
    tvS += Math.abs(s[x + 1] - s[x]);
  }
  // And its levels must be in c: after removing a straight-line trend from both, subtracting s must take
  // away at least half of its own energy from c (an edge summed without its partner leaves a whole stretch
  // offset that c does not have, and fails here).
  const cd = detrend(c);
  const sd = detrend(s);
  let cc = 0;
  let rr = 0;
  let ss = 0;
  for (let x = 0; x < lineLen; x++) {
    cc += cd[x] * cd[x];
    rr += (cd[x] - sd[x]) ** 2;
    ss += sd[x] * sd[x];
  }
  return tvC - tvRest >= MIN_TV_EXPLAINED * tvS && rr <= cc - 0.5 * ss;
}

/** a minus its least-squares straight line (common practice). */
function detrend(a: Float64Array): Float64Array {
  const n = a.length;
  const xm = (n - 1) / 2;
  let sy = 0;
  let sxy = 0;
  let sxx = 0;
  for (let x = 0; x < n; x++) {
    sy += a[x];
    sxy += (x - xm) * a[x];
    sxx += (x - xm) ** 2;
  }
  const slope = sxx > 0 ? sxy / sxx : 0;
  return a.map((v, x) => v - sy / n - slope * (x - xm));
}
