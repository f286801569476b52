/**
 * Which noise model a clean uses, and the variance-stabilising transforms when it is Poisson–Gaussian.
 *
 * With `noiseModel` 'auto' the noise level function σ²(x) = a·x + b is fitted to every colour plane
 * (noise-level.ts, after Foi et al., IEEE TIP 17(10), 2008). The Poisson–Gaussian path is taken when the
 * slope matters on this scan: a is significant (above 3 standard errors) and the variance at the bright end
 * of the scan (95th percentile of the block means) is at least VARIANCE_RATIO times the variance at the dark
 * end (5th percentile). Otherwise the plain Gaussian path runs as before (σ from noise-estimate.ts), so
 * scans with brightness-independent noise are cleaned exactly as without the model.
 *
 * On the Poisson–Gaussian path each plane goes through the generalized Anscombe transform (anscombe.ts),
 * scaled so that the stabilised noise has σ_s = the model's σ at the scan's mean brightness (averaged over
 * colour planes); the denoiser then sees white noise of that σ, and its outputs are mapped back with the
 * closed-form exact unbiased inverse (Mäkitalo & Foi, IEEE TIP 20(9), 2011; 22(1), 2013).
 */
import type { CleanMethodOptions, NoiseModelPlane, NoiseModelReport } from '../../contract';
import { type Stabiliser, stabiliser } from './anscombe';
import { fitNoiseLevel, modelSigma } from './noise-level';

/** Variance ratio bright/dark end above which the slope matters (chosen here, not from a source). */
const VARIANCE_RATIO = 1.5;
/** The slope must exceed this many standard errors (common practice for a significance test). */
const SLOPE_SE = 3;

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
      points: f!.points,
    }));
    low = mean(fits.map((f) => f!.low));
    high = mean(fits.map((f) => f!.high));
    significant = fits.every((f) => f!.a > SLOPE_SE * f!.seA);
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
  } else if (positive && significant && ratio >= VARIANCE_RATIO) {
    model = 'poisson-gaussian';
    reason = `the noise variance grows ${ratio.toFixed(2)}× from the dark to the bright end of the scan`;
  } else {
    model = 'gaussian';
    reason = `the noise variance changes ${Number.isFinite(ratio) ? `${ratio.toFixed(2)}×` : 'little'} across the scan's brightness (below ${VARIANCE_RATIO}× or not significant)`;
  }
  const report: NoiseModelReport = {
    model,
    source: given ? 'given' : 'fitted',
    reason,
    a,
    b,
    planes: models,
  };
  if (model === 'gaussian')
    return { report, stabilisers: null, sigma: given ? Math.sqrt(Math.max(0, given.b)) : null };
  const scale = Math.max(
    1e-6,
    mean(models.map((m, c) => modelSigma(m, Math.min(maxValue, Math.max(0, mean(planes[c])))))),
  );
  return { report, stabilisers: models.map((m) => stabiliser(m, scale)), sigma: scale };
}
