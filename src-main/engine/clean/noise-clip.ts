/**
 * Clipped observations in the noise level fit: the mean and variance of a clipped normal variable, and the
 * level-set points of noise-level.ts mapped back to the unclipped model they came from.
 *
 * References
 * - A. Foi, M. Trimeche, V. Katkovnik, K. Egiazarian, "Practical Poissonian–Gaussian noise modeling and
 *   fitting for single-image raw-data", IEEE Trans. Image Process. 17(10):1737–1754, 2008.
 *   doi:10.1109/TIP.2008.2001399. The clipping part of the paper: a raw value z = y + σ(y)·ξ is stored as
 *   z̃ = max(0, min(z, top)); the level sets then measure ỹ = E{z̃} and σ̃ = std{z̃}, not y and σ(y), and the
 *   fit relates σ̃ to ỹ through y (the expectation and standard deviation of a clipped normal variable). The
 *   paper was not at hand when this was written: its section and equation numbers are not quoted here.
 * - A. Foi, "Clipped noisy images: heteroskedastic modeling and practical denoising", Signal Processing
 *   89(12):2609–2629, 2009. doi:10.1016/j.sigpro.2009.04.035. Sec. 2: the same clipped-normal expectation
 *   and variance, written out.
 * - The moments themselves are textbook (the censored normal distribution: N. L. Johnson, S. Kotz,
 *   N. Balakrishnan, "Continuous Univariate Distributions", Vol. 1, 2nd ed., Wiley 1994, Ch. 13; from memory)
 *   and are derived again below, so they can be checked without either paper. test/clean/noise-clip.test.ts
 *   compares them with scipy.
 *
 * Derivation. X ~ N(μ, σ²), Z = min(max(X, 0), top). With α = −μ/σ, β = (top − μ)/σ, the standard normal
 * density φ and distribution Φ, and W = Z − μ (shifted so that no large μ² cancels in the variance):
 *   W = σα with probability Φ(α), σβ with probability 1 − Φ(β), and σt for X = μ + σt in between, so
 *   E W  = σ[α·Φ(α) + β·(1 − Φ(β)) + φ(α) − φ(β)]                       (∫ t φ(t) dt = −φ(t))
 *   E W² = σ²[α²·Φ(α) + β²·(1 − Φ(β)) + Φ(β) − Φ(α) + α·φ(α) − β·φ(β)]  (∫ t² φ(t) dt = Φ(t) − t·φ(t))
 *   E Z = μ + E W,  Var Z = E W² − (E W)².
 */
import type { NoiseLevelPoint } from './noise-level-ml';

/**
 * Complementary error function, fractional error below 1.2·10⁻⁷ everywhere (Chebyshev fit "erfcc" of
 * W. H. Press, S. A. Teukolsky, W. T. Vetterling, B. P. Flannery, "Numerical Recipes in C", 2nd ed.,
 * Cambridge 1992, Sec. 6.2; coefficients from memory, checked against scipy in the test).
 */
export function erfc(x: number): number {
  const z = Math.abs(x);
  const t = 1 / (1 + 0.5 * z);
  const poly =
    -1.26551223 +
    t *
      (1.00002368 +
        t *
          (0.37409196 +
            t *
              (0.09678418 +
                t *
                  (-0.18628806 +
                    t *
                      (0.27886807 +
                        t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277))))))));
  const r = t * Math.exp(-z * z + poly);
  return x >= 0 ? r : 2 - r;
}

/** Standard normal distribution Φ(z) = ½·erfc(−z/√2). */
const normalCdf = (z: number) => 0.5 * erfc(-z / Math.SQRT2);
/** Standard normal density φ(z). */
const normalPdf = (z: number) => Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI);

/** Mean and variance of N(mu, sigma²) clipped to [0, top] (derivation in the header). */
export function clippedMoments(mu: number, sigma: number, top: number): { mean: number; variance: number } {
  if (!(sigma > 0)) {
    const m = Math.min(top, Math.max(0, mu));
    return { mean: m, variance: 0 };
  }
  const al = -mu / sigma;
  const be = (top - mu) / sigma;
  const pa = normalCdf(al);
  const qb = normalCdf(-be);
  const da = normalPdf(al);
  const db = normalPdf(be);
  const ew = al * pa + be * qb + da - db;
  const ew2 = al * al * pa + be * be * qb + (1 - qb - pa) + al * da - be * db;
  return { mean: mu + sigma * ew, variance: sigma * sigma * Math.max(0, ew2 - ew * ew) };
}

/**
 * Above this σ (grey levels) the rounded model is replaced by the continuous one: rounding then only adds its
 * 1/12 (Sheppard's correction, common practice), and the sum below would grow with σ (chosen here: at y = 0
 * the two models' clipped variances differ by 1.9 % at σ = 2, 0.49 % at σ = 4 and 0.12 % at σ = 8; scipy 1.10.1).
 */
const ROUNDED_MAX_SIGMA = 8;
/** Terms of the rounded model's sum reach this many σ either side of μ (the normal tail beyond is < 1e-18). */
const ROUNDED_REACH = 9;

/**
 * Mean and variance of round(X) clipped to [0, top], X ~ N(mu, sigma² − 1/12) (sigma² is the variance of the
 * stored integers, rounding included, as the fitted b is): the exact model of 8-bit data at the limits, where
 * the continuous clippedMoments is off by a few per cent (scipy 1.10.1, y = 0, σ² = 2 + 1/12: continuous
 * variance 0.710, rounded 0.737). P(k) = Φ((k + ½ − μ)/s) − Φ((k − ½ − μ)/s), with all of X < ½ at 0 and all
 * of X > top − ½ at top; the sums run over W = k − μ as in clippedMoments. `top` is an integer.
 */
export function roundedClippedMoments(
  mu: number,
  sigma: number,
  top: number,
): { mean: number; variance: number } {
  const s2 = sigma * sigma - 1 / 12;
  if (!(sigma <= ROUNDED_MAX_SIGMA) || !(s2 > 1e-12)) return clippedMoments(mu, sigma, top);
  const s = Math.sqrt(s2);
  const lo = Math.max(0, Math.floor(mu - ROUNDED_REACH * s));
  const hi = Math.min(top, Math.ceil(mu + ROUNDED_REACH * s));
  let below = lo === 0 ? 0 : normalCdf((lo - 0.5 - mu) / s);
  let ew = 0;
  let ew2 = 0;
  for (let k = lo; k <= hi; k++) {
    const upTo = k === top ? 1 : normalCdf((k + 0.5 - mu) / s);
    const p = upTo - below;
    below = upTo;
    const w = k - mu;
    ew += p * w;
    ew2 += p * w * w;
  }
  return { mean: mu + ew, variance: Math.max(0, ew2 - ew * ew) };
}

/** Level sets whose variance clipping cuts to below 1/MAX_SHRINK of the model's are not fitted (chosen here). */
const MAX_SHRINK = 2;
/**
 * The same limit for level sets measured with the plain mean of HH² (noise-level-limits.ts), whose σ̂ holds for
 * clipped data of any shape: 4 admits a flat region at the limit itself (shrink 2.93 at y = 0, rising to 4.04
 * at y = −σ/4; clipped-normal moments of the header) and not one below it, where almost every value is 0.
 */
const DEEP_MAX_SHRINK = 4;
/** Bisection steps for y (the bracket is at most a few hundred grey levels wide: 60 halvings reach 1e-15). */
const BISECTION_STEPS = 60;

/**
 * The expectation y whose clipped mean under σ²(y) = a·y + b is `observed` (the inverse of ỹ(y); ỹ rises
 * with y for the models fitted here). Null when `observed` is not strictly inside (0, top).
 */
export function unclippedLevel(
  observed: number,
  model: { a: number; b: number },
  top: number,
  moments = clippedMoments,
): number | null {
  if (!(observed > 0 && observed < top)) return null;
  const sd = (y: number) => Math.sqrt(Math.max(1e-12, model.a * y + model.b));
  const reach = 12 * sd(top);
  let lo = observed - reach;
  let hi = observed + reach;
  for (let k = 0; k < BISECTION_STEPS; k++) {
    const mid = 0.5 * (lo + hi);
    if (moments(mid, sd(mid), top).mean < observed) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * The points `raw` (ỹ, σ̃ measured on clipped data) mapped to the unclipped model `model`: each level moves
 * to the y with E{z̃} = ỹ, and σ̃ is scaled by σ(y)/std{z̃}(y), so a point that fits the clipped model lands
 * on the line a·y + b. Points clipped too hard (variance shrunk by more than MAX_SHRINK, or DEEP_MAX_SHRINK
 * where `deep` says the point's σ̂ holds for clipped data) or at the limits are marked unused; `keep` says which
 * raw points may be used at all (e.g. noise resolved by the data). With `rounded` (integer data) the `deep`
 * points are mapped through the rounded model (roundedClippedMoments).
 */
export function declipPoints(
  raw: NoiseLevelPoint[],
  keep: boolean[],
  model: { a: number; b: number },
  top: number,
  deep?: boolean[],
  rounded = false,
): NoiseLevelPoint[] {
  return raw.map((p, i) => {
    const moments = rounded && deep?.[i] ? roundedClippedMoments : clippedMoments;
    const y = unclippedLevel(p.level, model, top, moments);
    if (y === null) return { ...p, used: false };
    const v = Math.max(0, model.a * y + model.b);
    const clipped = moments(y, Math.sqrt(v), top).variance;
    const shrink = clipped > 0 ? v / clipped : Number.POSITIVE_INFINITY;
    return {
      ...p,
      level: y,
      sigma: p.sigma * Math.sqrt(Number.isFinite(shrink) ? shrink : 1),
      used: keep[i] && shrink <= (deep?.[i] ? DEEP_MAX_SHRINK : MAX_SHRINK),
    };
  });
}
