/**
 * Helpers of the wide-band pass (banding-wide.ts): line sampling, robust step statistics, the test that a
 * slice of the lines agrees with a step, and the check that a step-sum profile explains the direct
 * per-position levels.
 *
 * References
 * - J. W. Tukey, "Exploratory Data Analysis", Addison-Wesley 1977: medians and trimmed means as robust
 *   summaries.
 * - P. J. Huber, "Robust Statistics", Wiley 1981: the asymptotic variance of the trimmed mean at the
 *   normal (from memory).
 */
import type { LineResiduals } from './band-gather';
import { keepBackground } from './band-profile';
import { medianInPlace, runningMedian, select } from './medians';
import { MAD_TO_SIGMA } from './noise-estimate';

/**
 * Share trimmed from each end for the step estimate (chosen here: 0.25 let the justified text of page.png
 * bias the steps; 0.4 found 44 of 96 test cases against 39, none made worse).
 */
const TRIM = 0.4;
/**
 * Standard error of the 40 % trimmed mean over σ/√N for Gaussian data: √1.390, from its asymptotic
 * variance [∫₋c^c x²φ(x)dx + 2αc²]/(1 − 2α)², c = Φ⁻¹(1 − α) (Huber 1981, §3.3, formula from memory;
 * evaluated with scipy 1.17.1 integrate.quad and stats.norm.ppf).
 */
const TRIMMED_SE_FACTOR = 1.1789;
/** A slice's step agrees when it has the whole's sign and at least this share of its size (chosen here)… */
const PART_AGREEMENT = 0.5;
/**
 * …or, in the lenient test, lies within this many of its standard errors of it (chosen here: with 1/8 of
 * 512 lines a slice's step has a standard error of ~0.5 grey levels at noise σ 3, so the share alone
 * rejected real band edges of 2–7 grey levels on camera.png and text.png by chance).
 */
const PART_SE = 3;

/**
 * The profile must remove at least this share of its own total variation from the direct per-position
 * levels (chosen here): a missed edge would leave a whole stretch offset, which adds variation instead.
 */
const MIN_TV_EXPLAINED = 0.75;
/**
 * The same for an uncut chain (banding-wide.ts), whose bridges cross content that moves the direct levels
 * too: half of its variation must be in them (chosen here, as the energy half's share below: true bands on
 * text.png's columns, bench seeds 1–2, gave 0.70 and 0.73; the clean rocket.jpg crop's invented chain 0.33).
 */
const MIN_TV_EXPLAINED_UNCUT = 0.5;

/**
 * The level check of a one-edge profile looks this far (px) to either side of the edge (chosen here: twice
 * the narrowest wide band, banding-wide.ts MIN_BAND_WIDTH; a curved illumination is close to straight there).
 */
const SINGLE_EDGE_REACH = 48;

/** Half-width of the running median that tells ink from paper for the background-only lines (as the narrow pass's). */
const BACKGROUND_HALF_WINDOW = 32;

/**
 * The nLines sampled lines `raw` (band-gather.ts gatherLines, line-major: raw[k·lineLen + x]) for the step
 * measurements: clipped pixels (0 or max) are NaN.
 * With `background`, pixels far from their line's running median (ink on paper, band-profile.ts
 * keepBackground) are NaN too, so steps are measured on the paper alone; their running-median residuals
 * are taken from `known` (the narrow pass's, of the same plane and lines) when the half-width matches.
 */
export function sampleLines(
  raw: Float64Array,
  lineLen: number,
  nLines: number,
  maxValue: number,
  background = false,
  known: LineResiduals | null = null,
): Float64Array {
  const out = new Float64Array(raw.length);
  for (let i = 0; i < raw.length; i++) out[i] = raw[i] <= 0 || raw[i] >= maxValue ? Number.NaN : raw[i];
  if (background) {
    const resid = new Float64Array(out.length);
    const med = new Float64Array(lineLen);
    const w = Math.max(2, Math.min(BACKGROUND_HALF_WINDOW, Math.floor(lineLen / 4)));
    if (known && known.halfWindow === w && known.resid.length === resid.length)
      for (let x = 0; x < lineLen; x++)
        for (let k = 0; k < nLines; k++) resid[k * lineLen + x] = known.resid[x * nLines + k];
    else
      for (let k = 0; k < nLines; k++) {
        const o = k * lineLen;
        const line = raw.subarray(o, o + lineLen);
        runningMedian(line, w, med);
        for (let x = 0; x < lineLen; x++) resid[o + x] = line[x] - med[x];
      }
    keepBackground(resid, new Float64Array(Math.min(resid.length, 1 << 16)));
    for (let i = 0; i < out.length; i++) if (Number.isNaN(resid[i])) out[i] = Number.NaN;
  }
  return out;
}

/**
 * Per line k in [from, to): the mean of the `w` pixels after difference b minus the mean of the `w` pixels
 * up to difference a (pixels b+1 … b+w and a−w+1 … a); NaN where a window leaves the line or holds a
 * clipped pixel.
 */
export function windowDifferences(
  levels: Float64Array,
  lineLen: number,
  w: number,
  a: number,
  b: number,
  from: number,
  to: number,
): Float64Array {
  const out = new Float64Array(Math.max(0, to - from));
  for (let k = from; k < to; k++) {
    const o = k * lineLen;
    let left = 0;
    let right = 0;
    for (let d = 0; d < w; d++) {
      left += a - d >= 0 ? levels[o + a - d] : Number.NaN;
      right += b + 1 + d < lineLen ? levels[o + b + 1 + d] : Number.NaN;
    }
    out[k - from] = (right - left) / w;
  }
  return out;
}

/**
 * The 40 % trimmed mean of the finite values of v[from, to) (the middle 20 %: close to a median, but
 * smoother in the data; content edges on a minority of lines fall in the trimmed tails), their spread (MAD scaled
 * to σ) and their count. `scratch` holds at least to − from values. Only the middle order statistics are
 * needed: two selections bring them into place and only they are sorted, so the sum runs in the same order
 * as over a fully sorted array (same result, a fraction of the comparisons).
 */
export function robustStep(v: Float64Array, from: number, to: number, scratch: Float64Array) {
  let count = 0;
  for (let i = from; i < to; i++) if (Number.isFinite(v[i])) scratch[count++] = v[i];
  if (count === 0) return { step: 0, spread: 0, count };
  const lo = Math.floor(count * TRIM);
  const hi = Math.max(lo + 1, count - lo);
  select(scratch, 0, count - 1, lo);
  select(scratch, lo, count - 1, hi - 1);
  const s = scratch.subarray(0, count);
  s.subarray(lo, hi).sort();
  let sum = 0;
  for (let i = lo; i < hi; i++) sum += s[i];
  // The median's one or two order statistics lie inside [lo, hi) for every count (TRIM < 0.5).
  const med = count % 2 ? s[(count - 1) >> 1] : (s[count / 2 - 1] + s[count / 2]) / 2;
  for (let i = 0; i < count; i++) s[i] = Math.abs(s[i] - med);
  return { step: sum / (hi - lo), spread: medianInPlace(s, count) / MAD_TO_SIGMA, count };
}

/**
 * A slice of the lines agrees with the whole's step `whole`: a band edge is the same on every line, so
 * only noise moves a slice's step, while a content edge differs from slice to slice. `lenient` also
 * accepts a slice within PART_SE standard errors of the whole.
 */
export function partAgrees(
  part: { step: number; spread: number; count: number },
  whole: number,
  lenient: boolean,
): boolean {
  if (Math.sign(part.step) !== Math.sign(whole)) return false;
  if (Math.abs(part.step) >= PART_AGREEMENT * Math.abs(whole)) return true;
  return lenient && Math.abs(part.step - whole) <= PART_SE * standardError(part);
}

/**
 * The mean of the shortest half of the finite values of v (the shorth: Andrews et al. 1972, from memory),
 * sorted in `scratch` (at least as long as v); 0 when none is finite. Its estimate stays with the densest
 * half of the lines when up to half of them are moved one way, where the median and the trimmed mean move
 * with them.
 */
export function shorth(v: Float64Array, scratch: Float64Array): number {
  let n = 0;
  for (let i = 0; i < v.length; i++) if (Number.isFinite(v[i])) scratch[n++] = v[i];
  if (n === 0) return 0;
  const s = scratch.subarray(0, n).sort();
  const h = Math.ceil(n / 2);
  let at = 0;
  for (let i = 1; i + h <= n; i++) if (s[i + h - 1] - s[i] < s[at + h - 1] - s[at]) at = i;
  let sum = 0;
  for (let i = at; i < at + h; i++) sum += s[i];
  return sum / h;
}

/**
 * The densest half of the lines agrees with a group's step `step` measured on all of them (its shorth of
 * the per-line window steps `perLine` has the same sign and at least PART_AGREEMENT of its size). A band
 * edge moves every line by the same step, so the densest half sits at it, as every other robust centre
 * does. Content that crosses a share of the lines just below the trimmed mean's 40 % (a row of coins along
 * the lines' direction: scikit-image's coins.png, the lower edges of a row of coins cross ~35 % of the
 * columns) pulls the trimmed mean far towards its tail, while the densest half stays with the lines the
 * content misses: there the trimmed mean measured −4.4 and −3.8 grey levels, the shorth −0.4 and +1.4.
 */
export function densestAgrees(perLine: Float64Array, step: number, scratch: Float64Array): boolean {
  const s = shorth(perLine, scratch);
  return Math.sign(s) === Math.sign(step) && Math.abs(s) >= PART_AGREEMENT * Math.abs(step);
}

/** Standard error of a robustStep estimate (TRIMMED_SE_FACTOR·spread/√count). */
export function standardError(r: { spread: number; count: number }): number {
  return (TRIMMED_SE_FACTOR * r.spread) / Math.sqrt(Math.max(1, r.count));
}

/** A step must exceed this many standard errors of its estimate (chosen here: 5 keeps white noise out). */
export const STEP_SE = 5;

/**
 * The smallest step a typical position of the lines shows as significant: STEP_SE standard errors of a
 * window step whose spread across nLines lines is `typicalSpread`. A profile whose RMS is below it may be
 * missing band edges of its own size, which offsets whole stretches and makes the image worse than leaving
 * it (scikit-image's grass.png: a 50–200 px band pattern of RMS 4 behind texture whose window steps spread
 * 31 grey levels across lines gave thresholds of 8–9 against profiles of RMS 6.7–8 holding one of four
 * edges, −2 to −3 dB), so banding-wide.ts does not remove it.
 */
export function detectionThreshold(typicalSpread: number, nLines: number): number {
  return STEP_SE * standardError({ spread: typicalSpread, count: nLines });
}

/**
 * The direct levels of the level check: c(x) = median over the nLines sampled lines `raw` of (pixel − the line's
 * median), computed once per axis (band-lines.ts) and shared by every candidate profile. NaN pixels (the ink
 * of background-only lines, sampleLines) are left out of both medians.
 */
export function directLevels(raw: Float64Array, lineLen: number, nLines: number): Float64Array {
  const vals = new Float64Array(lineLen * nLines);
  const finite = (from: Float64Array, to: Float64Array) => {
    let n = 0;
    for (let i = 0; i < from.length; i++) if (!Number.isNaN(from[i])) to[n++] = from[i];
    return n;
  };
  const row = new Float64Array(lineLen);
  for (let k = 0; k < nLines; k++) {
    const line = raw.subarray(k * lineLen, (k + 1) * lineLen);
    const m = medianInPlace(row, finite(line, row));
    for (let x = 0; x < lineLen; x++) vals[x * nLines + k] = line[x] - m;
  }
  const c = new Float64Array(lineLen);
  const col = new Float64Array(nLines);
  for (let x = 0; x < lineLen; x++) {
    const n = finite(vals.subarray(x * nLines, (x + 1) * nLines), col);
    c[x] = n ? medianInPlace(col, n) : 0;
  }
  return c;
}

/**
 * Check the step-sum profile s against the direct levels c (directLevels): real bands are in c, so
 * subtracting s removes their edges and the total variation falls by about TV(s); a profile that integrated
 * a content edge without its partner adds a step, and the variation rises. `variationOnly`: this half alone,
 * at MIN_TV_EXPLAINED_UNCUT (banding-wide.ts, for an uncut chain), without the energy half below.
 */
export function explainsLevels(c: Float64Array, s: Float64Array, variationOnly = false): boolean {
  const lineLen = s.length;
  const { tvC, tvRest, tvS } = variations(c, s);
  if (variationOnly) return tvC - tvRest >= MIN_TV_EXPLAINED_UNCUT * tvS;
  // And its levels must be in c: after removing a straight-line trend from both, subtracting s must take
  // away at least half of its own energy from c (an edge summed without its partner leaves a whole stretch
  // offset that c does not have, and fails here). A profile of one edge has no partner to miss, and over
  // the whole line a curved illumination is no straight line (text.png's rows: an S of 18 grey levels hid
  // a band edge of 8 there), so its levels are compared within SINGLE_EDGE_REACH of the edge, where
  // subtracting it must not add energy (a content edge 7 px from that band edge, of the opposite sign,
  // left only 28 of the 151 asked for).
  const edge = singleEdge(s);
  const from = edge < 0 ? 0 : Math.max(0, edge - SINGLE_EDGE_REACH);
  const to = edge < 0 ? lineLen : Math.min(lineLen, edge + 1 + SINGLE_EDGE_REACH);
  const cd = detrend(c.subarray(from, to));
  const sd = detrend(s.subarray(from, to));
  let cc = 0;
  let rr = 0;
  let ss = 0;
  for (let x = 0; x < cd.length; x++) {
    cc += cd[x] * cd[x];
    rr += (cd[x] - sd[x]) ** 2;
    ss += sd[x] * sd[x];
  }
  return tvC - tvRest >= MIN_TV_EXPLAINED * tvS && rr <= cc - (edge < 0 ? 0.5 * ss : 0);
}

/**
 * How much total variation subtracting s takes out of the levels c: TV(c) − TV(c − s). Real band edges are
 * in c, so removing them takes about their size each; an edge c does not have adds its size instead.
 */
export function explainedVariation(c: Float64Array, s: Float64Array): number {
  const { tvC, tvRest } = variations(c, s);
  return tvC - tvRest;
}

/** Total variations of the levels c, of c − s and of s. */
function variations(c: Float64Array, s: Float64Array) {
  let tvC = 0;
  let tvRest = 0;
  let tvS = 0;
  for (let x = 0; x + 1 < s.length; x++) {
    tvC += Math.abs(c[x + 1] - c[x]);
    tvRest += Math.abs(c[x + 1] - s[x + 1] - c[x] + s[x]);
    tvS += Math.abs(s[x + 1] - s[x]);
  }
  return { tvC, tvRest, tvS };
}

/**
 * Subtracting s from the levels c adds total variation: its steps are not in c (the weakest level check,
 * for chained profiles that fail explainsLevels: their cuts leave stretch offsets that c need not show).
 */
export function addsVariation(c: Float64Array, s: Float64Array): boolean {
  const { tvC, tvRest } = variations(c, s);
  return tvRest > tvC;
}

/** The position x of the only step s(x+1) ≠ s(x) of the profile, or −1 when it has none or several. */
function singleEdge(s: Float64Array): number {
  let at = -1;
  for (let x = 0; x + 1 < s.length; x++)
    if (s[x + 1] !== s[x]) {
      if (at >= 0) return -1;
      at = x;
    }
  return at;
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
