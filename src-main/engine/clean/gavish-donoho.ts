/**
 * Optimal hard threshold for singular values, and the noise level implied by the median singular value.
 *
 * References
 * - M. Gavish, D. L. Donoho, "The Optimal Hard Threshold for Singular Values is 4/√3",
 *   IEEE Trans. Inf. Theory 60(8):5040–5053, 2014. doi:10.1109/TIT.2014.2323359 (arXiv:1305.5870).
 *   λ*(β) formula (labelled "Eq. (11)" in the authors' code as ported in erichson/optht; equation
 *   number not checked against the IEEE text), ω(β) = λ*(β)/√μ_β, and the cubic approximation
 *   ω(β) ≈ 0.56β³ − 0.95β² + 1.82β + 1.43 ("Eq. (5)" there, same caveat).
 * - V. A. Marčenko, L. A. Pastur, "Distribution of eigenvalues for some sets of random matrices",
 *   Math. USSR-Sbornik 1(4):457–483, 1967. The density √((b₊−t)(t−b₋))/(2πβt) on [b₋, b₊],
 *   b± = (1 ± √β)², for the eigenvalues of (1/n)·Z·Zᵀ, Z m×n with iid N(0,1) entries, β = m/n.
 *
 * Convention: Y = X + σZ is m×n with m ≤ n (transpose otherwise), β = m/n ∈ (0, 1].
 */

/** λ*(β) = sqrt(2(β+1) + 8β / ((β+1) + sqrt(β² + 14β + 1))). λ*(1) = 4/√3. */
export function lambdaStar(beta: number): number {
  checkBeta(beta);
  return Math.sqrt(2 * (beta + 1) + (8 * beta) / (beta + 1 + Math.sqrt(beta * beta + 14 * beta + 1)));
}

/** Gauss–Legendre nodes and weights on [−1, 1] (Golub–Welsch is not needed at this size: Newton on P_n). */
const GL_ORDER = 40;
const GL = gaussLegendre(GL_ORDER);
/** Panels of the composite rule over [0, θ]. The integrand is analytic there, so 4×40 points reach ~1e-16. */
const GL_PANELS = 4;

function gaussLegendre(n: number): { x: Float64Array; w: Float64Array } {
  const x = new Float64Array(n);
  const w = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    // Chebyshev-like starting guess (Abramowitz & Stegun 25.4.29 style), then Newton on P_n.
    let z = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5));
    let dp = 0;
    for (let it = 0; it < 100; it++) {
      let p0 = 1;
      let p1 = z;
      for (let k = 2; k <= n; k++) {
        const p2 = ((2 * k - 1) * z * p1 - (k - 1) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      dp = (n * (z * p1 - p0)) / (z * z - 1);
      const dz = p1 / dp;
      z -= dz;
      if (Math.abs(dz) < 1e-16) break;
    }
    x[i] = z;
    w[i] = 2 / ((1 - z * z) * dp * dp);
  }
  return { x, w };
}

/**
 * Marchenko–Pastur cumulative distribution F_β(t(θ)) after the substitution t = b₋ + (b₊−b₋)·sin²θ,
 * which turns the density into the smooth integrand (b₊−b₋)²·sin²θ·cos²θ / (πβ·t(θ)) on [0, π/2]
 * (no endpoint square-root singularities, and no 1/t blow-up at β = 1 since t ∝ sin²θ there).
 */
function mpCdfTheta(beta: number, theta: number): number {
  const bm = (1 - Math.sqrt(beta)) ** 2;
  const bp = (1 + Math.sqrt(beta)) ** 2;
  const d = bp - bm;
  const f = (th: number) => {
    const s = Math.sin(th);
    const c = Math.cos(th);
    const t = bm + d * s * s;
    // At β = 1 and θ → 0 both t and s² vanish; the ratio s²/t = 1/d is finite.
    const ratio = bm === 0 ? 1 / d : (s * s) / t;
    return (d * d * ratio * c * c) / (Math.PI * beta);
  };
  let sum = 0;
  const h = theta / GL_PANELS;
  for (let p = 0; p < GL_PANELS; p++) {
    const a = p * h;
    for (let i = 0; i < GL_ORDER; i++) sum += GL.w[i] * f(a + (h / 2) * (GL.x[i] + 1));
  }
  return (sum * h) / 2;
}

/** Marchenko–Pastur CDF at t, for ratio β ∈ (0, 1] and unit variance. */
export function marchenkoPasturCdf(beta: number, t: number): number {
  checkBeta(beta);
  const bm = (1 - Math.sqrt(beta)) ** 2;
  const bp = (1 + Math.sqrt(beta)) ** 2;
  if (t <= bm) return 0;
  if (t >= bp) return 1;
  return mpCdfTheta(beta, Math.asin(Math.sqrt((t - bm) / (bp - bm))));
}

/**
 * μ_β, the median of the Marchenko–Pastur law: solves F_β(μ) = 1/2 with Brent's method on θ
 * (R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall 1973, ch. 4).
 */
export function marchenkoPasturMedian(beta: number): number {
  checkBeta(beta);
  const cached = medianCache.get(beta);
  if (cached !== undefined) return cached;
  const bm = (1 - Math.sqrt(beta)) ** 2;
  const bp = (1 + Math.sqrt(beta)) ** 2;
  const theta = brent((th) => mpCdfTheta(beta, th) - 0.5, 0, Math.PI / 2, 1e-16);
  const s = Math.sin(theta);
  const mu = bm + (bp - bm) * s * s;
  if (medianCache.size > 4096) medianCache.clear();
  medianCache.set(beta, mu);
  return mu;
}
const medianCache = new Map<number, number>();

/** ω(β) = λ*(β)/√μ_β, exact (numerical μ_β). ω(1) ≈ 2.858 (Gavish–Donoho 2014, abstract). */
export function omega(beta: number): number {
  return lambdaStar(beta) / Math.sqrt(marchenkoPasturMedian(beta));
}

/** The paper's cubic approximation of ω(β); error ≲ 0.006 on β ∈ [0.1, 1]. */
export function omegaCubic(beta: number): number {
  checkBeta(beta);
  return 0.56 * beta ** 3 - 0.95 * beta ** 2 + 1.82 * beta + 1.43;
}

/** Order an m×n shape as β = min/max and n = max. */
function shapeRatio(rows: number, cols: number): { beta: number; n: number } {
  const m = Math.min(rows, cols);
  const n = Math.max(rows, cols);
  if (!(m >= 1)) throw new RangeError(`matrix shape ${rows}×${cols} has no entries`);
  return { beta: m / n, n };
}

/** σ known: τ = λ*(β)·√n·σ. Keep singular values strictly above τ. */
export function thresholdKnownSigma(rows: number, cols: number, sigma: number): number {
  const { beta, n } = shapeRatio(rows, cols);
  return lambdaStar(beta) * Math.sqrt(n) * sigma;
}

/** σ unknown: τ = ω(β)·y_med, y_med the median singular value. */
export function thresholdUnknownSigma(rows: number, cols: number, medianSingularValue: number): number {
  const { beta } = shapeRatio(rows, cols);
  return omega(beta) * medianSingularValue;
}

/** Noise estimate σ̂ = y_med / √(n·μ_β) (Gavish–Donoho 2014, the σ-unknown case). */
export function sigmaFromMedian(rows: number, cols: number, medianSingularValue: number): number {
  const { beta, n } = shapeRatio(rows, cols);
  return medianSingularValue / Math.sqrt(n * marchenkoPasturMedian(beta));
}

/** Median of the singular values (upper median of an even count is not used: the mean of the two middle ones). */
export function medianOf(values: ArrayLike<number>): number {
  const a = Float64Array.from(values as ArrayLike<number>).sort();
  const k = a.length;
  if (k === 0) return Number.NaN;
  return k % 2 ? a[(k - 1) / 2] : (a[k / 2 - 1] + a[k / 2]) / 2;
}

/** Number of singular values strictly above τ. `s` need not be sorted. */
export function rankAbove(s: ArrayLike<number>, tau: number): number {
  let r = 0;
  for (let i = 0; i < s.length; i++) if (s[i] > tau) r++;
  return r;
}

function checkBeta(beta: number) {
  if (!(beta > 0 && beta <= 1)) throw new RangeError(`aspect ratio β must lie in (0, 1] but is ${beta}`);
}

/** Brent's root finder on [a, b] with f(a)·f(b) < 0. */
function brent(f: (x: number) => number, a0: number, b0: number, tol: number): number {
  let a = a0;
  let b = b0;
  let fa = f(a);
  let fb = f(b);
  if (fa * fb > 0) throw new RangeError('brent: root not bracketed');
  let c = a;
  let fc = fa;
  let d = b - a;
  let e = d;
  for (let iter = 0; iter < 200; iter++) {
    if (fb * fc > 0) {
      c = a;
      fc = fa;
      d = b - a;
      e = d;
    }
    if (Math.abs(fc) < Math.abs(fb)) {
      a = b;
      b = c;
      c = a;
      fa = fb;
      fb = fc;
      fc = fa;
    }
    const tol1 = 2 * 2.220446049250313e-16 * Math.abs(b) + 0.5 * tol;
    const xm = 0.5 * (c - b);
    if (Math.abs(xm) <= tol1 || fb === 0) return b;
    if (Math.abs(e) >= tol1 && Math.abs(fa) > Math.abs(fb)) {
      const s = fb / fa;
      let p: number;
      let q: number;
      if (a === c) {
        p = 2 * xm * s;
        q = 1 - s;
      } else {
        const qq = fa / fc;
        const r = fb / fc;
        p = s * (2 * xm * qq * (qq - r) - (b - a) * (r - 1));
        q = (qq - 1) * (r - 1) * (s - 1);
      }
      if (p > 0) q = -q;
      p = Math.abs(p);
      if (2 * p < Math.min(3 * xm * q - Math.abs(tol1 * q), Math.abs(e * q))) {
        e = d;
        d = p / q;
      } else {
        d = xm;
        e = d;
      }
    } else {
      d = xm;
      e = d;
    }
    a = b;
    fa = fb;
    b += Math.abs(d) > tol1 ? d : xm > 0 ? tol1 : -tol1;
    fb = f(b);
  }
  return b;
}
