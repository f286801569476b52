/**
 * The stripe profile of one axis and its detection test (used by banding.ts).
 *
 * A pure column-stripe pattern is the rank-one matrix 1·sᵀ (a row pattern is b·1ᵀ). The profile s is
 * estimated robustly so that real edges and text are not taken for stripes:
 * 1. along each sampled line, subtract a running median (a robust high-pass: it follows edges and
 *    illumination but not narrow stripes);
 * 2. take, at each position, the median of these residuals across lines (band-median.ts). Content varies
 *    from line to line and is rejected; a stripe is the same on every line and survives.
 * Detection asks for four things: the profile is well above its own estimation noise, the profiles of
 * the two halves of the image agree (content differs between halves, stripes do not), the spread across
 * lines is as uniform as an additive pattern's, and its robust strength is at least one grey level.
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
import { gatherLines, type LineResiduals } from './band-gather';
import { interpolatedMedian } from './band-median';
import { refinedProfile } from './band-refine';
import { dominantPeriod, removeMean, rms, sharedEnergy } from './band-stats';
import { medianInPlace, runningMedian } from './medians';
import { MAD_TO_SIGMA } from './noise-estimate';

type BandingAxis = 'rows' | 'columns';

export interface StripeProfile {
  axis: BandingAxis;
  /**
   * Offset per row (axis rows, length height) or per column (axis columns, length width), zero mean. When
   * detected, the background estimate of band-refine.ts; otherwise the profile the test ran on.
   */
  profile: Float64Array;
  /** RMS of the profile in grey levels of the input. */
  strength: number;
  /**
   * The profile the detection test ran on (the same array as `profile` when not detected). The later
   * decisions of banding.ts (the wide pass, the rows after the columns) were chosen on planes with this
   * one subtracted, and still see those planes.
   */
  tested: Float64Array;
  /** 1.4826·median|profile| of the profile the test ran on: the bulk's strength, insensitive to a few spikes. */
  robustStrength: number;
  /** RMS standard error of the median profile (from the spread across lines at each position). */
  noiseFloor: number;
  /** ⟨top-half profile, bottom-half profile⟩ / ‖profile‖², clamped to [−1, 1] (1 = the same stripes in both halves). */
  consistency: number;
  /** Spread across lines where the profile is strongest over where it is weakest (≈ 1 for additive stripes). */
  spreadRatio: number;
  /** Median over positions of the lines' robust spread around the profile (their noise and texture), grey levels. */
  lineSpread: number;
  /** Variance factor of each position's median from neighbouring lines that share content (≈ 1: independent; lineDependence). */
  lineDependence: number;
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

/** A period is reported when the spectral peak (±1 bin) holds at least this share of the energy. */
export const MIN_PERIOD_SHARE = 0.3;
/** √(π/2): standard error of a median relative to the mean's, for Gaussian data. */
const MEDIAN_SE_FACTOR = 1.2533141373155003;
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
 * The same floor for a profile of the background alone (text pages, keepBackground). The paper next to ink
 * is darkened by the ink's blur, a halo that follows the lines of text: on clean text pages this profile
 * measures 1.15–1.29 grey levels (page.png, its transpose and page.png rescaled ×1.5, noise σ 3, where
 * the ×1.5 page was taken for row banding at a floor of 1), while row banding of RMS 4 measures 5.4–5.5
 * (chosen here: 2, a margin of 1.5× over the halo).
 */
const MIN_BACKGROUND_STRENGTH_8BIT = 2;
/**
 * The robust strength must exceed this many times the noise floor. Fitted on: the clean images of
 * test/fixtures/images and samples/ (3 leaves every one untouched) and the striped cases of
 * test/clean/banding.test.ts (moon, camera and text with synthetic stripes; page for text lines).
 */
const SIGNIFICANCE = 3;
/**
 * The noise floor treats the lines as independent; neighbouring lines of a picture share its content (a
 * vessel, a fibre, a blurred edge crosses several of them), so the medians' real error is larger by the
 * square root of lineDependence's factor. The robust strength must also exceed this many of those larger
 * errors (chosen here: 2). Measured with noise σ 3: scikit-image's microaneurysms.png rows (vessels along
 * the rows, no banding; taken for banding before this test, −1.9 to −3.4 dB) 1.4–1.7 on the whole lines and
 * 1.5–2.0 on the paper; the narrow stripes and banding of the cleaning benchmark and of test/clean 2.02 or
 * more (text.png rows with random stripes of RMS 3 the lowest, 2.02–2.05; camera.png 2.7, moon.png 8).
 * Random row stripes of RMS 2 on text.png (1.5) are no longer found.
 */
const DEPENDENT_SIGNIFICANCE = 2;
/** Neighbouring lines over which lineDependence sums the correlation (chosen here: 8). */
const DEPENDENCE_LAGS = 8;
/** Minimum correlation between the two halves' profiles. Fitted on: as SIGNIFICANCE. */
const MIN_CONSISTENCY = 0.5;
/** Slices of the lines whose profiles must each carry the whole one (partsAgree; chosen here)… */
const PARTS = 4;
/**
 * …at least this share of it (chosen here: the stripes and periodic banding of the cleaning benchmark on
 * camera, moon, page, text and gel-scan gave 0.87 or more in every slice, samples/line-sensor-banding.png's
 * rows 0.79; content taken for banding on unseen images gave 0.23 (chelsea.png rows) and 0.69 (coins.png
 * rows, on the paper)).
 */
const MIN_PART_SHARE = 0.75;
/**
 * Largest spread ratio of a detected profile: above it, the "stripes" follow content (text lines, edges).
 * Fitted on: as SIGNIFICANCE (the text-heavy page.png and text.png set the ceiling).
 */
export const MAX_SPREAD_RATIO = 1.8;

/**
 * Estimate the stripe profile of one axis and run the detection test. `keep` receives the lines' running
 * median residuals before the background test changes them (banding.ts hands them to the wide pass).
 */
export function estimateStripeProfile(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  axis: BandingAxis,
  options: BandingOptions,
  background = false,
  keep?: (r: LineResiduals) => void,
): StripeProfile {
  // For column stripes the "lines" are rows (we look along x); for row stripes they are columns.
  const lineLen = axis === 'columns' ? width : height;
  const lineCount = axis === 'columns' ? height : width;
  const nLines = Math.min(lineCount, MAX_SAMPLE_LINES);
  const w = Math.max(2, Math.min(options.halfWindow ?? DEFAULT_HALF_WINDOW, Math.floor(lineLen / 4)));
  // Residuals stored position-major (resid[x·nLines + k]) so each position's values are contiguous.
  const resid = new Float64Array(nLines * lineLen);
  const lines = gatherLines(plane, width, height, axis, nLines);
  const med = new Float64Array(lineLen);
  for (let k = 0; k < nLines; k++) {
    const line = lines.subarray(k * lineLen, (k + 1) * lineLen);
    runningMedian(line, w, med);
    for (let x = 0; x < lineLen; x++) resid[x * nLines + k] = line[x] - med[x];
  }
  const col = new Float64Array(nLines);
  keep?.({ lines, resid, halfWindow: w });
  const cut = backgroundCut(resid, col);
  if (background) keepBackground(resid, col, cut);
  const half = nLines >> 1;
  const profile = new Float64Array(lineLen);
  const top = new Float64Array(lineLen);
  const bottom = new Float64Array(lineLen);
  const count = new Float64Array(lineLen);
  const finite = (from: number, to: number) => {
    let n = 0;
    for (let i = from; i < to; i++) if (Number.isFinite(resid[i])) col[n++] = resid[i];
    return n;
  };
  for (let x = 0; x < lineLen; x++) {
    const o = x * nLines;
    top[x] = interpolatedMedian(col, finite(o, o + half));
    bottom[x] = interpolatedMedian(col, finite(o + half, o + nLines));
    count[x] = finite(o, o + nLines);
    profile[x] = interpolatedMedian(col, count[x]);
  }
  const span = lineSpan(resid, profile, nLines);
  const dependence = lineDependence(resid, profile, nLines);
  const raw = Float64Array.from(profile);
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
    let n = 0;
    for (let k = 0; k < nLines; k++)
      if (Number.isFinite(resid[o + k])) col[n++] = Math.abs(resid[o + k] - profile[x]);
    spread[x] = medianInPlace(col, n) / MAD_TO_SIGMA;
    se2 += (spread[x] * spread[x]) / Math.max(1, n);
  }
  const noiseFloor = MEDIAN_SE_FACTOR * Math.sqrt(se2 / lineLen);
  const lineSpread = medianInPlace(Float64Array.from(spread), lineLen);
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
  // Robust strength 1.4826·median|profile| (MAD scale): a few full-length straight lines of the scene (a map
  // grid, a neatline, a table rule) make isolated spikes in the profile that pass every other test; they
  // barely move the median, whereas real banding affects most lines.
  // Measured around the profile's median, not its mean: spikes shift the mean of everything else.
  const centre = medianInPlace(Float64Array.from(profile), profile.length);
  const absP = Float64Array.from(profile, (v) => Math.abs(v - centre));
  const robustStrength = medianInPlace(absP, absP.length) / MAD_TO_SIGMA;
  const minStrength =
    ((background ? MIN_BACKGROUND_STRENGTH_8BIT : MIN_STRENGTH_8BIT) * options.maxValue) / 255;
  const detected =
    robustStrength >= minStrength &&
    robustStrength >= SIGNIFICANCE * noiseFloor &&
    robustStrength >= DEPENDENT_SIGNIFICANCE * noiseFloor * Math.sqrt(dependence) &&
    consistency >= MIN_CONSISTENCY &&
    spreadRatio <= MAX_SPREAD_RATIO &&
    partsAgree(profile, nLines, (x, from, to) =>
      interpolatedMedian(col, finite(x * nLines + from, x * nLines + to)),
    );
  // What is subtracted once detected: the same medians without the content biases (band-refine.ts).
  const removed = detected ? refinedProfile(lines, resid, nLines, lineLen, w, cut, raw) : profile;
  const { period, share } = dominantPeriod(removed);
  return {
    axis,
    profile: removed,
    tested: profile,
    strength: detected ? rms(removed) : strength,
    robustStrength,
    noiseFloor,
    consistency,
    spreadRatio,
    lineSpread,
    lineDependence: dependence,
    period: share >= MIN_PERIOD_SHARE ? period : null,
    periodShare: share,
    span,
    detected,
  };
}

/**
 * Each of PARTS slices of the lines, alone, gives a profile `median(x, from, to)` that carries at least
 * MIN_PART_SHARE of `profile` (⟨part, profile⟩/‖profile‖², band-stats.ts sharedEnergy). Banding is the
 * same on every line; content such as a face or a row of coins shows in some slices only, and the halves'
 * consistency test alone let it through (scikit-image's chelsea.png rows: slices 0.93, 0.35, 0.23, 1.00,
 * halves 0.55; its profile of 4 grey levels made the image 4.6 dB worse at noise σ 3).
 */
function partsAgree(
  profile: Float64Array,
  nLines: number,
  median: (x: number, from: number, to: number) => number,
): boolean {
  const part = new Float64Array(profile.length);
  for (let q = 0; q < PARTS; q++) {
    const from = Math.floor((q * nLines) / PARTS);
    const to = Math.floor(((q + 1) * nLines) / PARTS);
    for (let x = 0; x < profile.length; x++) part[x] = median(x, from, to);
    removeMean(part);
    if (sharedEnergy(part, profile, profile) < MIN_PART_SHARE) return false;
  }
  return true;
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

/**
 * The factor by which dependence between neighbouring lines inflates the variance of each position's median:
 * 1 + 2·Σ ρ(j) over lags j = 1 … DEPENDENCE_LAGS (at least 1), where ρ(j) is the correlation of the signs
 * of the residuals around the raw median m(x) on lines j apart, each position's signs centred on their
 * own mean (whole grey levels make the share above m(x) differ a little from ½). For a sample median of a
 * stationary sequence, the error is that of the mean of the indicators 1{r ≤ m}, whose variance carries
 * exactly these correlations (Bahadur representation of sample quantiles; P. K. Sen, "On the Bahadur
 * representation of sample quantiles for sequences of φ-mixing random variables", J. Multivariate Anal.
 * 2(1):77–95, 1972, from memory). Noise and banding alone give ≈ 1: the profile takes the banding out, and
 * noise is independent from line to line; content that crosses several neighbouring lines gives 2–7.
 */
function lineDependence(resid: Float64Array, raw: Float64Array, nLines: number): number {
  const L = raw.length;
  // Signs, position-major as resid; residuals left out by keepBackground (NaN) are marked 2 and skipped.
  const sign = new Int8Array(resid.length);
  const mean = new Float64Array(L);
  let variance = 0;
  let count = 0;
  for (let x = 0; x < L; x++) {
    const o = x * nLines;
    let sum = 0;
    let sq = 0;
    let n = 0;
    for (let k = 0; k < nLines; k++) {
      const d = resid[o + k] - raw[x];
      const v = d > 0 ? 1 : d < 0 ? -1 : d === 0 ? 0 : 2;
      sign[o + k] = v;
      if (v !== 2) {
        sum += v;
        sq += v * v;
        n++;
      }
    }
    if (n === 0) continue;
    mean[x] = sum / n;
    variance += sq - (sum * sum) / n;
    count += n;
  }
  if (!(variance > 0)) return 1;
  let f = 1;
  for (let j = 1; j <= DEPENDENCE_LAGS && j < nLines; j++) {
    let cov = 0;
    let pairs = 0;
    for (let x = 0; x < L; x++) {
      const o = x * nLines;
      const m = mean[x];
      for (let k = 0; k + j < nLines; k++) {
        const a = sign[o + k];
        const b = sign[o + k + j];
        if (a !== 2 && b !== 2) {
          cov += (a - m) * (b - m);
          pairs++;
        }
      }
    }
    if (pairs > 0) f += (2 * (cov / pairs)) / (variance / count);
  }
  return Math.max(1, f);
}

/**
 * Background-only profiles keep residuals within this many robust standard deviations of zero (chosen here:
 * 3 keeps paper with noise and banding of a few grey levels, drops ink that is tens of levels darker).
 */
const BACKGROUND_CUT = 3;

/**
 * Background only (text pages): residuals further than BACKGROUND_CUT robust standard deviations from zero
 * become NaN, so each position's statistics come from the paper (or the dark ground) alone. Ink is many
 * noise levels from the paper around it and drops out; banding moves the paper itself and stays. Without
 * this, lines of text pull the median at their rows and their period hides the banding's.
 */
export function keepBackground(
  resid: Float64Array,
  scratch: Float64Array,
  cut = backgroundCut(resid, scratch),
) {
  for (let i = 0; i < resid.length; i++) if (Math.abs(resid[i]) > cut) resid[i] = Number.NaN;
}

/** BACKGROUND_CUT robust standard deviations of the residuals (from an even sample of scratch.length of them). */
function backgroundCut(resid: Float64Array, scratch: Float64Array): number {
  const step = Math.max(1, Math.floor(resid.length / scratch.length));
  let n = 0;
  for (let i = 0; i < resid.length && n < scratch.length; i += step) scratch[n++] = Math.abs(resid[i]);
  return (BACKGROUND_CUT * medianInPlace(scratch, n)) / MAD_TO_SIGMA;
}
