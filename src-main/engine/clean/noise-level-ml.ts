/**
 * The maximum-likelihood fit of σ²(x) = a·x + b to level-set estimates of the noise, with its uncertainty.
 *
 * Reference
 * - A. Foi, M. Trimeche, V. Katkovnik, K. Egiazarian, "Practical Poissonian–Gaussian noise modeling and
 *   fitting for single-image raw-data", IEEE Trans. Image Process. 17(10):1737–1754, 2008.
 *   doi:10.1109/TIP.2008.2001399. Sec. IV: the level-set estimates are treated as independent, each with a
 *   Gaussian distribution around the model whose spread follows from the number of samples behind it, and
 *   (a, b) maximise the joint likelihood. There the estimate is a sample standard deviation; here it is a
 *   median-based variance σ̂², whose spread is Var σ̂² ≈ 4·1.36·σ⁴/n (the sample variance has 2·σ⁴/n).
 *   Derivation: a sample quantile has asymptotic variance q(1 − q)/(n·f²) (common practice); for the median
 *   of |N(0, σ²)|, m = 0.6745σ and f = 2φ(0.6745)/σ, so Var σ̂ = 0.619σ²/(n·0.6745²) = 1.36·σ²/n (the MAD's
 *   known 37 % efficiency, P. J. Huber, "Robust Statistics", Wiley 1981; from memory) and, by the delta
 *   method, Var σ̂² = (2σ)²·Var σ̂ = 5.44·σ⁴/n. A seeded simulation (numpy 1.24.2, 20 000 sets of n = 1024)
 *   gives n·Var σ̂² = 5.44. (Until this was checked the code used 2·1.36, half the spread.)
 *
 * The likelihood of point i with v_i = a·x_i + b is N(σ̂²_i; v_i, c·v_i²/n_i), c = 4·1.36. It is maximised by
 * Fisher scoring started from iteratively reweighted least squares; the covariance of (a, b) is the inverse
 * Fisher information, widened by the Pearson dispersion when the points scatter more than the model says
 * (quasi-likelihood, common practice; texture that survives the segmentation does that).
 */

/** One level set: its mean intensity, the noise σ measured there, and how many blocks gave it. */
export interface NoiseLevelPoint {
  level: number;
  sigma: number;
  count: number;
  /** False when the fit dropped this point (clipping guard, or too far above the fit). */
  used: boolean;
  /**
   * n·Var σ̂²/σ⁴ of this point's σ̂², when it differs from the fit's (measured from the blocks: the level sets
   * at the clipping limits of noise-level-limits.ts); absent: the fit's `spread`.
   */
  spread?: number;
}

/** A fitted model with the standard errors of a and b and their correlation. */
export interface LevelFit {
  a: number;
  b: number;
  seA: number;
  seB: number;
  /** Covariance of a and b (0 when a was held at 0). */
  covAB: number;
}

/** n·Var σ̂ / σ² of the median-based σ̂ (1.36 for the MAD; derivation in the header). */
const MAD_EFFICIENCY = 1.36;
export const MAD_SPREAD = 4 * MAD_EFFICIENCY;
/** Points more than this many standard errors above the fit are dropped, one at a time (chosen here). */
const OUTLIER_SE = 3;
/** A negative b within this many standard errors of 0 is taken as 0 (two-sided 95 %, common practice). */
const NEGATIVE_B_SE = 2;
/** Fisher-scoring iterations (the likelihood is smooth; 8 steps change a by < 1e-9 on the bench images). */
const SCORING_STEPS = 8;

const varOf = (f: { a: number; b: number }, x: number) => f.a * x + f.b;
/** The spread of point `p`: its own, else the fit's `c`. */
const spreadOf = (p: NoiseLevelPoint, c: number) => p.spread ?? c;

/**
 * Fit the used points, then drop the point furthest above the fit while it lies more than OUTLIER_SE
 * standard errors above (texture only adds variance; below-fit points are kept), refitting each time. At
 * least three points stay. Returns null when fewer than three points are usable.
 */
export function fitLevelsTrimmed(points: NoiseLevelPoint[], spread = MAD_SPREAD): LevelFit | null {
  if (points.filter((p) => p.used).length < 3) return null;
  let fit = fitLevels(points, spread);
  for (;;) {
    let worst: NoiseLevelPoint | null = null;
    let worstZ = OUTLIER_SE;
    for (const p of points) {
      if (!p.used) continue;
      const model = Math.max(1e-12, varOf(fit, p.level));
      const z = (p.sigma * p.sigma - model) / (model * Math.sqrt(spreadOf(p, spread) / p.count));
      if (z > worstZ) {
        worstZ = z;
        worst = p;
      }
    }
    if (!worst || points.filter((p) => p.used).length <= 3) return fit;
    worst.used = false;
    fit = fitLevels(points, spread);
  }
}

/**
 * The maximum-likelihood (a, b) over the used points; a ≥ 0 (a negative slope is noise of the fit), and b ≥ 0
 * unless the points put b below 0 by more than NEGATIVE_B_SE standard errors (a black-level offset can do that).
 */
function fitLevels(points: NoiseLevelPoint[], c: number): LevelFit {
  const used = points.filter((p) => p.used);
  let f = irls(used, c);
  if (f.a > 0) f = scoring(used, f, 'both', c);
  if (!(f.a > 0)) f = scoring(used, { a: 0, b: f.b }, 'b', c);
  const fit = withCovariance(used, f, f.a > 0, c);
  if (!(fit.a > 0 && fit.b < 0 && fit.b > -NEGATIVE_B_SE * fit.seB)) return fit;
  // b below 0 but within NEGATIVE_B_SE standard errors of it: the data cannot tell b from 0, and a negative
  // variance at the dark end is not what a scan has; fit a with b = 0 (the line through the origin, the
  // boundary of b ≥ 0). The standard errors stay those of the free fit: they say how little b is pinned.
  if (used.some((p) => !(p.level > 0))) return fit;
  let n = 0;
  let d = 0;
  for (const p of used) {
    n += p.count * p.sigma * p.sigma;
    d += p.count * p.level;
  }
  const g = scoring(used, { a: n / d, b: 0 }, 'a', c);
  return g.a > 0 ? { a: g.a, b: 0, seA: fit.seA, seB: fit.seB, covAB: 0 } : fit;
}

/** Iteratively reweighted least squares, weights n/(c·v²) from the current model (first pass: n). */
function irls(used: NoiseLevelPoint[], c: number): { a: number; b: number } {
  let a = 0;
  let b = 0;
  for (let it = 0; it < 6; it++) {
    let sw = 0;
    let sx = 0;
    let sy = 0;
    let sxx = 0;
    let sxy = 0;
    for (const p of used) {
      // First pass: weights by count only (a σ̂² near 0 would otherwise take all the weight).
      const w = it === 0 ? p.count : p.count / (spreadOf(p, c) * Math.max(a * p.level + b, 1e-6) ** 2);
      const y = p.sigma * p.sigma;
      sw += w;
      sx += w * p.level;
      sy += w * y;
      sxx += w * p.level * p.level;
      sxy += w * p.level * y;
    }
    const det = sw * sxx - sx * sx;
    if (!(det > 0)) return { a: 0, b: sy / sw };
    a = (sw * sxy - sx * sy) / det;
    b = (sxx * sy - sx * sxy) / det;
    if (a < 0) return { a: 0, b: sy / sw };
  }
  return { a, b };
}

/**
 * Fisher scoring of the full likelihood −log L = Σ n(y − v)²/(2c·v²) + log v over the `free` parameters
 * (both, or one with the other held). A step that makes some v ≤ 0 or does not lower −log L is halved.
 */
function scoring(
  used: NoiseLevelPoint[],
  start: { a: number; b: number },
  free: 'both' | 'a' | 'b',
  c: number,
) {
  let f = { ...start };
  for (let it = 0; it < SCORING_STEPS; it++) {
    const { ga, gb, iaa, iab, ibb } = sums(used, f, c);
    let da = free === 'a' ? ga / iaa : 0;
    let db = free === 'b' ? gb / ibb : 0;
    if (free === 'both') {
      const det = iaa * ibb - iab * iab;
      if (!(det > 0)) break;
      da = (ibb * ga - iab * gb) / det;
      db = (iaa * gb - iab * ga) / det;
    }
    const before = negLogLikelihood(used, f, c);
    let step = 1;
    const at = (t: number) => ({ a: f.a + t * da, b: f.b + t * db });
    while (step > 1e-3 && !(negLogLikelihood(used, at(step), c) <= before)) step /= 2;
    if (step <= 1e-3) break;
    f = at(step);
    if (
      free === 'a'
        ? Math.abs(step * da) < 1e-12 * (1 + f.a)
        : Math.abs(step * db) < 1e-10 * (1 + Math.abs(f.b))
    )
      break;
  }
  return f;
}

/**
 * At model `f`: the score (−∂(−log L)/∂a, ∂b), the Fisher information of (a, b) — per point
 * n/(c·v²) + 2/v² for v — and the Pearson χ² of the points.
 */
function sums(used: NoiseLevelPoint[], f: { a: number; b: number }, c: number) {
  const t = { ga: 0, gb: 0, iaa: 0, iab: 0, ibb: 0, chi2: 0 };
  for (const p of used) {
    const v = Math.max(1e-9, varOf(f, p.level));
    const r = p.sigma * p.sigma - v;
    const cp = spreadOf(p, c);
    const g = (p.count * r) / (cp * v * v) + (p.count * r * r) / (cp * v * v * v) - 1 / v;
    const info = p.count / (cp * v * v) + 2 / (v * v);
    t.ga += g * p.level;
    t.gb += g;
    t.iaa += info * p.level * p.level;
    t.iab += info * p.level;
    t.ibb += info;
    t.chi2 += (r * r * p.count) / (cp * v * v);
  }
  return t;
}

/** −log L up to a constant; +∞ where the model variance is not positive at some point. */
function negLogLikelihood(used: NoiseLevelPoint[], f: { a: number; b: number }, c: number): number {
  let s = 0;
  for (const p of used) {
    const v = varOf(f, p.level);
    if (!(v > 0)) return Number.POSITIVE_INFINITY;
    s += (p.count * (p.sigma * p.sigma - v) ** 2) / (2 * spreadOf(p, c) * v * v) + Math.log(v);
  }
  return s;
}

/** Inverse Fisher information at `f`, times the Pearson dispersion when it is above 1. */
function withCovariance(
  used: NoiseLevelPoint[],
  f: { a: number; b: number },
  slope: boolean,
  c: number,
): LevelFit {
  const { iaa, iab, ibb, chi2 } = sums(used, f, c);
  const dof = Math.max(1, used.length - (slope ? 2 : 1));
  const dispersion = Math.max(1, chi2 / dof);
  const det = iaa * ibb - iab * iab;
  // With a held at 0, seA is still the spread a would have if it were free (so a test "a > k·seA" reads it).
  const seA = det > 0 ? Math.sqrt((dispersion * ibb) / det) : Number.POSITIVE_INFINITY;
  if (!slope) return { a: 0, b: f.b, seA, seB: Math.sqrt(dispersion / ibb), covAB: 0 };
  if (!(det > 0)) return { ...f, seA, seB: Number.POSITIVE_INFINITY, covAB: 0 };
  return { ...f, seA, seB: Math.sqrt((dispersion * iaa) / det), covAB: (-dispersion * iab) / det };
}
