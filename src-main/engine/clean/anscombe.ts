/**
 * Variance stabilisation of Poisson–Gaussian noise: the generalized Anscombe transform and the closed-form
 * approximation of its exact unbiased inverse.
 *
 * The noise model is the one of noise-level.ts: a sample z with expectation x has variance a·x + b (grey
 * levels of the input). Written as z = a·p + n with p ~ Poisson(x/a) and n ~ N(0, b), the scaled sample
 * z̃ = z/a is Poisson(λ = x/a) plus Gaussian noise of variance σ̃² = b/a², the normalised model of the papers.
 * A negative b (a pedestal, or an offset black level) is read as an offset instead: a·x + b = a·(x − x₀)
 * with x₀ = −b/a, and σ̃ = 0.
 *
 * References
 * - F. J. Anscombe, "The transformation of Poisson, binomial and negative-binomial data", Biometrika
 *   35(3/4):246–254, 1948: 2·√(z + 3/8).
 * - J.-L. Starck, F. Murtagh, A. Bijaoui, "Image Processing and Data Analysis: The Multiscale Approach",
 *   Cambridge University Press 1998: the generalized Anscombe transform f(z̃) = 2·√(z̃ + 3/8 + σ̃²) (written
 *   here for α = 1, μ = 0 after the scaling above).
 * - M. Mäkitalo, A. Foi, "A closed-form approximation of the exact unbiased inverse of the Anscombe
 *   variance-stabilizing transformation", IEEE Trans. Image Process. 20(9):2697–2698, 2011:
 *   I(D) = ¼D² + ¼√(3/2)·D⁻¹ − 11/8·D⁻² + 5/8·√(3/2)·D⁻³ − 1/8.
 * - M. Mäkitalo, A. Foi, "Optimal inversion of the generalized Anscombe transformation for Poisson–Gaussian
 *   noise", IEEE Trans. Image Process. 22(1):91–103, 2013: the same closed form minus σ̃² approximates the
 *   exact unbiased inverse of the generalized transform (the equation number is not checked here; the
 *   formula was checked numerically against the exact unbiased inverse, see test/clean/anscombe.test.ts).
 */

/** The Poisson–Gaussian noise model σ²(x) = a·x + b, in grey levels of the input. */
export interface NoiseLevelModel {
  a: number;
  b: number;
}

/** The stabilising transform of one plane: the model, its normalisation and the output noise σ. */
export interface Stabiliser {
  /** Poisson gain a (> 0). */
  a: number;
  /** Offset x₀ subtracted first (0 unless b < 0). */
  offset: number;
  /** σ̃² = b/a² of the normalised model (0 when b ≤ 0). */
  s2: number;
  /** The transform is multiplied by this, so the stabilised noise has σ = scale instead of 1. */
  scale: number;
}

const SQRT_3_2 = Math.sqrt(1.5);
/**
 * Below this D the closed form turns upwards again (its minimum, found numerically: D = 0.838, value
 * −0.24); every such D stands for an expectation of 0. E[f] at λ = 0 is 2·√(3/8) = 1.2247 or more, so a
 * clean estimate never lands there; only overshoot of a denoiser does.
 */
const CLOSED_FORM_MIN_D = 0.838;

/** A stabiliser for `model` whose output noise has standard deviation `scale`. Requires a > 0. */
export function stabiliser(model: NoiseLevelModel, scale: number): Stabiliser {
  const { a, b } = model;
  if (!(a > 0)) throw new RangeError(`the Poisson gain a must be above 0 but is ${a}`);
  return b >= 0 ? { a, offset: 0, s2: b / (a * a), scale } : { a, offset: -b / a, s2: 0, scale };
}

/** f(z) = scale·2·√(max(0, (z − x₀)/a + 3/8 + σ̃²)). */
export function gatForward(z: number, s: Stabiliser): number {
  const t = (z - s.offset) / s.a + 0.375 + s.s2;
  return t > 0 ? 2 * s.scale * Math.sqrt(t) : 0;
}

/** The closed-form approximation of the exact unbiased inverse, on the normalised scale (λ from D). */
export function closedFormInverse(D: number, s2: number): number {
  if (!(D > CLOSED_FORM_MIN_D)) return 0;
  const r = 1 / D;
  const v = 0.25 * D * D + 0.25 * SQRT_3_2 * r - 1.375 * r * r + 0.625 * SQRT_3_2 * r * r * r - 0.125 - s2;
  return v > 0 ? v : 0;
}

/** The estimate of the expectation x from a denoised transformed value. */
function gatInverse(value: number, s: Stabiliser): number {
  return s.a * closedFormInverse(value / s.scale, s.s2) + s.offset;
}

/** Apply the forward transform to a whole plane. */
export function stabilisePlane(plane: Float32Array, s: Stabiliser): Float32Array {
  return plane.map((v) => gatForward(v, s));
}

/** Apply the inverse to a whole plane. */
export function unstabilisePlane(plane: Float32Array, s: Stabiliser): Float32Array {
  return plane.map((v) => gatInverse(v, s));
}
