/**
 * Which noise model a clean uses, and the variance-stabilising transforms when it is Poisson–Gaussian.
 *
 * With `noiseModel` 'auto' the noise level function σ²(x) = a·x + b is fitted to every colour plane
 * (noise-level.ts, after Foi et al., IEEE TIP 17(10), 2008). The Poisson–Gaussian path is taken when the
 * slope matters on this scan: a is significant (above 3 standard errors) and the ratio R of the variance at
 * the bright end of the scan (95th percentile of the block means) to the variance at the dark end (5th
 * percentile) is at least VARIANCE_RATIO even after subtracting RATIO_SE standard errors of R (from the fit's
 * covariance of a and b, delta method). So the choice is made on what the fit can tell apart, not on its
 * noise. Otherwise the plain Gaussian path runs as before (σ from noise-estimate.ts), so scans with
 * brightness-independent noise are cleaned exactly as without the model.
 *
 * On the Poisson–Gaussian path each plane goes through the generalized Anscombe transform (anscombe.ts),
 * scaled so that the stabilised noise has σ_s = the model's σ at the scan's mean brightness (averaged over
 * colour planes); the denoiser then sees white noise of that σ, and its outputs are mapped back with the
 * closed-form exact unbiased inverse (Mäkitalo & Foi, IEEE TIP 20(9), 2011; 22(1), 2013).
 *
 * b is the variance at x = 0. When the flat level sets the fit used start far from 0 (and a > 0), b is not
 * measured but extrapolated, and the report says so (extrapolationNote). Far means above NEAR_BLACK of the
 * range, or where the slope part a·x₀ already exceeds b (the variance there is more than twice b). Measured on
 * the bench's 15 Poisson–Gaussian cases and 30 on 10 unseen images (fit-only harness of the h10 session): the
 * lowest used set is at x₀ ≤ 4 with a·x₀ < b (camera, astronaut, phantom, chessboard), at 21–22 with a·x₀ =
 * 2–4·b (cell), or at x₀ ≥ 84 of 255; these last have a standard error of b from 0.2 to 17 times b.
 */
import type { CleanMethodOptions, NoiseModelPlane, NoiseModelReport } from '../../contract';
import { type Stabiliser, stabiliser } from './anscombe';
import { fitNoiseLevel, modelSigma, type NoiseLevelFit } from './noise-level';

/** Lowest used level set, as a share of the range, above which b counts as extrapolated (chosen here; header). */
const NEAR_BLACK = 0.1;
/** Variance ratio bright/dark end above which the slope matters (chosen here, not from a source). */
const VARIANCE_RATIO = 1.5;
/** The slope must exceed this many standard errors (common practice for a significance test). */
const SLOPE_SE = 3;
/** R must stay at or above VARIANCE_RATIO after subtracting this many of its standard errors (chosen here). */
const RATIO_SE = 2;

export interface NoisePlan {
  report: NoiseModelReport | null;
  /** One per colour plane on the Poisson–Gaussian path; null on the Gaussian path. */
  stabilisers: Stabiliser[] | null;
  /** σ of the stabilised noise (Poisson–Gaussian), or σ from a given a = 0 model; null: estimate as before. */
  sigma: number | null;
}

const mean = (p: ArrayLike<number>) => {
  let s = 0;
  for (let i = 0; i < p.length; i++) s += p[i];
  return s / Math.max(1, p.length);
};

/**
 * Standard error of R = (a·high + b)/(a·low + b) from the covariance of a and b (delta method):
 * ∂R/∂a = b·(high − low)/d², ∂R/∂b = −a·(high − low)/d², d = a·low + b. Infinite when d ≤ 0.
 */
function ratioError(f: NoiseLevelFit, low: number, high: number): number {
  const d = f.a * low + f.b;
  if (!(d > 0)) return Number.POSITIVE_INFINITY;
  const ga = (f.b * (high - low)) / (d * d);
  const gb = (-f.a * (high - low)) / (d * d);
  const v = ga * ga * f.seA * f.seA + gb * gb * f.seB * f.seB + 2 * ga * gb * f.covAB;
  return Math.sqrt(Math.max(0, v));
}

/**
 * A sentence on how b was found when the fit extrapolated it: in some plane with a > 0 the lowest level set the
 * fit used, x₀, lies above NEAR_BLACK·`top` or where a·x₀ > b. Null when every such plane reaches near 0.
 * Colour planes are named when there are several.
 */
export function extrapolationNote(models: NoiseModelPlane[], top: number): string | null {
  const far = models
    .map((m) => ({ m, from: Math.min(...m.points.filter((p) => p.used).map((p) => p.level)) }))
    .filter(
      ({ m, from }) => m.a > 0 && Number.isFinite(from) && (from > NEAR_BLACK * top || m.a * from > m.b),
    );
  if (far.length === 0) return null;
  const name = (m: NoiseModelPlane) => (models.length > 1 ? ` (${m.plane})` : '');
  const levels = far.map(({ m, from }) => `${from.toFixed(0)}${name(m)}`).join(', ');
  const errors = far.map(({ m }) => `${(m.seB ?? Number.NaN).toFixed(2)}${name(m)}`).join(', ');
  return `b is extrapolated from levels ≥ ${levels}: no flat part of the scan is darker, so b is known only to ± ${errors}`;
}

/** Decide the model for the colour planes (after banding removal) and build the transforms. */
export function planNoiseModel(
  planes: Float32Array[],
  names: string[],
  width: number,
  height: number,
  maxValue: number,
  settings: Pick<CleanMethodOptions, 'noise' | 'noiseModel' | 'noiseLevel'>,
): NoisePlan {
  const none: NoisePlan = { report: null, stabilisers: null, sigma: null };
  if (settings.noise !== 'auto') return none;
  const given = settings.noiseLevel;
  let models: NoiseModelPlane[];
  let low = 0;
  let high = maxValue;
  let significant = true;
  let ratioSe = 0;
  if (given) {
    models = names.map((plane) => ({ plane, a: given.a, b: given.b, seA: null, seB: null, points: [] }));
  } else {
    const fits = planes.map((p) => fitNoiseLevel(p, width, height, maxValue));
    if (fits.some((f) => f === null)) return none;
    models = fits.map((f, c) => ({
      plane: names[c],
      a: f!.a,
      b: f!.b,
      seA: f!.seA,
      seB: f!.seB,
      // The report's points carry what the contract lists (the fit's own `spread` stays inside the engine).
      points: f!.points.map(({ level, sigma, count, used }) => ({ level, sigma, count, used })),
    }));
    low = mean(fits.map((f) => f!.low));
    high = mean(fits.map((f) => f!.high));
    significant = fits.every((f) => f!.a > SLOPE_SE * f!.seA);
    ratioSe = mean(fits.map((f) => ratioError(f!, f!.low, f!.high)));
  }
  const a = mean(models.map((m) => m.a));
  const b = mean(models.map((m) => m.b));
  const ratio = (a * high + b) / Math.max(a * low + b, Number.MIN_VALUE);
  const choice = settings.noiseModel ?? 'auto';
  const positive = models.every((m) => m.a > 0);
  let model: NoiseModelReport['model'];
  let reason: string;
  if (given) {
    model = positive ? 'poisson-gaussian' : 'gaussian';
    reason = positive
      ? 'given with --noise A,B'
      : 'given with --noise A,B (a = 0: the same noise at every level)';
  } else if (choice === 'gaussian') {
    model = 'gaussian';
    reason = 'forced with --noise-model gaussian';
  } else if (choice === 'poisson-gaussian') {
    model = positive ? 'poisson-gaussian' : 'gaussian';
    reason = positive
      ? 'forced with --noise-model poisson-gaussian'
      : 'forced with --noise-model poisson-gaussian, but the fitted a is 0 in a plane: the same noise at every level';
  } else if (positive && significant && ratio - RATIO_SE * ratioSe >= VARIANCE_RATIO) {
    model = 'poisson-gaussian';
    reason = `the noise variance grows ${ratio.toFixed(2)}× ± ${ratioSe.toFixed(2)} from the dark to the bright end of the scan`;
  } else {
    model = 'gaussian';
    reason = `the noise variance changes ${Number.isFinite(ratio) ? `${ratio.toFixed(2)}× ± ${ratioSe.toFixed(2)}` : 'little'} across the scan's brightness (not clearly above ${VARIANCE_RATIO}×: ${RATIO_SE} standard errors below it reach under ${VARIANCE_RATIO}×, or a is not significant)`;
  }
  const report: NoiseModelReport = {
    model,
    source: given ? 'given' : 'fitted',
    reason,
    a,
    b,
    planes: models,
  };
  const note = given ? null : extrapolationNote(models, maxValue);
  if (note) report.bNote = note;
  if (model === 'gaussian')
    return { report, stabilisers: null, sigma: given ? Math.sqrt(Math.max(0, given.b)) : null };
  const scale = Math.max(
    1e-6,
    mean(models.map((m, c) => modelSigma(m, Math.min(maxValue, Math.max(0, mean(planes[c])))))),
  );
  return { report, stabilisers: models.map((m) => stabiliser(m, scale)), sigma: scale };
}
