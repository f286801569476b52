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

/** Level sets whose variance clipping cuts to below 1/MAX_SHRINK of the model's are not fitted (chosen here). */
const MAX_SHRINK = 2;
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
): number | null {
  if (!(observed > 0 && observed < top)) return null;
  const sd = (y: number) => Math.sqrt(Math.max(1e-12, model.a * y + model.b));
  const reach = 12 * sd(top);
  let lo = observed - reach;
  let hi = observed + reach;
  for (let k = 0; k < BISECTION_STEPS; k++) {
    const mid = 0.5 * (lo + hi);
    if (clippedMoments(mid, sd(mid), top).mean < observed) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * The points `raw` (ỹ, σ̃ measured on clipped data) mapped to the unclipped model `model`: each level moves
 * to the y with E{z̃} = ỹ, and σ̃ is scaled by σ(y)/std{z̃}(y), so a point that fits the clipped model lands
 * on the line a·y + b. Points clipped too hard (variance shrunk by more than MAX_SHRINK) or at the limits are
 * marked unused; `keep` says which raw points may be used at all (e.g. noise resolved by the data).
 */
export function declipPoints(
  raw: NoiseLevelPoint[],
  keep: boolean[],
  model: { a: number; b: number },
  top: number,
): NoiseLevelPoint[] {
  return raw.map((p, i) => {
    const y = unclippedLevel(p.level, model, top);
    if (y === null) return { ...p, used: false };
    const v = Math.max(0, model.a * y + model.b);
    const clipped = clippedMoments(y, Math.sqrt(v), top).variance;
    const shrink = clipped > 0 ? v / clipped : Number.POSITIVE_INFINITY;
    return {
      level: y,
      sigma: p.sigma * Math.sqrt(Number.isFinite(shrink) ? shrink : 1),
      count: p.count,
      used: keep[i] && shrink <= MAX_SHRINK,
    };
  });
}
