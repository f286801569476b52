/**
 * Rate–distortion model of the stack layout, from statistics only: no plane is coded here.
 *
 * For one plane at pixel-domain step Δ (band steps Δ_b = Δ/√g_b, dead-zone rounding as the plane coder:
 * ρ = 0.5 in LL, 0.38 elsewhere — ./wavelet-plane), a pass over the sampled coefficients (./stack-analysis)
 * builds each band's histogram of quantised magnitudes m = ⌊|x|/Δ_b + ρ⌋ and gives
 * - bits: the band's zeroth-order entropy of m (0…15, then the Exp-Golomb escape of the range coder) plus
 *   one bit per sign, scaled by the coefficients each sample stands for. Coefficient coder 2's contexts do
 *   better than a memoryless source (Shannon's bound on the order-0 model: its entropy is an upper bound of
 *   any memoryless code, and context coding beats it by the mutual information of neighbours), so callers
 *   calibrate the bits with the ratio of real encodes to the estimate ({@link RateCalibration});
 * - error: the pixel-domain squared error after coding, Σ_b g_b·Σ(x − x̂)², with x̂ the bin centroid that
 *   coder 2 sends as its reconstruction offset (Sullivan 1996), one for |q| = 1 and one for |q| ≥ 2;
 * - energy: the squared error if the plane is not coded at all (Σ_b g_b·Σx²).
 * The 9/7 pair is nearly orthogonal, so g_b-weighted coefficient errors approximate pixel errors (Usevitch,
 * IEEE Signal Process. Mag. 18(5), 2001; from memory).
 */
import type { StackGeometry } from './stack-analysis';

/** Dead-zone rounding of the plane coder (./wavelet-plane): 0.5 in LL, 0.38 in the detail bands. */
const RHO_LL = 0.5;
const RHO_DETAIL = 0.38;
/** Magnitudes from here on go to the range coder's Exp-Golomb escape. */
const CAP = 16;
/** Coder 2 sends a bin's reconstruction offset only when the band has at least this many of its values. */
const MIN_OFFSET_COUNT = 8;
/** Offsets are multiples of 1/32 of the band step within [−16, 20]/32 (coder 2, ./coeff-coder). */
const OFFSET_UNIT = 32;
const OFFSET_MIN = -16 / 32;
const OFFSET_MAX = 20 / 32;
/** The coder's leading flag and 5 flush bytes. */
const PLANE_FIXED_BITS = 41;

export interface PlaneEstimate {
  bits: number;
  /** Pixel-domain squared error if the plane is coded at this step. */
  error: number;
  /** Pixel-domain squared error if it is not coded (its energy). */
  energy: number;
}

function bandSteps(g: StackGeometry, step: number): Float64Array {
  return Float64Array.from(g.bands, (b) => step / Math.sqrt(b.gain));
}

/** Magnitude bins of the plane being estimated (reused: one estimate runs at a time on a thread). */
let scratch = new Int32Array(0);

/** Per-sample magnitude bins at step Δ: m, and the band's per-sample accumulators. */
function quantiseSample(x: Float64Array, g: StackGeometry, steps: Float64Array, m: Int32Array) {
  const nb = g.bands.length;
  const counts = new Float64Array(nb * (CAP + 1));
  const esc = new Float64Array(nb);
  const zero = new Float64Array(nb);
  const all = new Float64Array(nb);
  // Per band and class (|q| = 1, |q| ≥ 2): count, Σt, Σt² with t = |x|/Δ_b − |q|.
  const acc = new Float64Array(nb * 6);
  const inv = Float64Array.from(steps, (s) => 1 / s);
  const rho = Float64Array.from(g.bands, (b) => (b.orient === 0 ? RHO_LL : RHO_DETAIL));
  const band = g.sampleBand;
  for (let s = 0; s < x.length; s++) {
    const b = band[s];
    const v = x[s];
    const e = v * v;
    all[b] += e;
    const u = (v < 0 ? -v : v) * inv[b];
    const q = Math.floor(u + rho[b]);
    m[s] = q;
    if (q === 0) {
      zero[b] += e;
      counts[b * (CAP + 1)]++;
      continue;
    }
    counts[b * (CAP + 1) + (q < CAP ? q : CAP)]++;
    if (q >= CAP) esc[b] += 2 * Math.floor(Math.log2(q - CAP + 1)) + 1;
    const t = u - q;
    const o = b * 6 + (q === 1 ? 0 : 3);
    acc[o]++;
    acc[o + 1] += t;
    acc[o + 2] += t * t;
  }
  return { counts, esc, zero, all, acc };
}

/**
 * Estimate one plane from its sampled coefficients `x` at step `step`. When `deq` is given it receives the
 * dequantised sample (what a decoder would rebuild at those positions), for planes that later planes
 * depend on (the mean frame and the eigen-frames).
 */
export function estimatePlane(
  x: Float64Array,
  g: StackGeometry,
  step: number,
  deq?: Float64Array,
): PlaneEstimate {
  const nb = g.bands.length;
  const steps = bandSteps(g, step);
  if (scratch.length < x.length) scratch = new Int32Array(x.length);
  const m = scratch;
  const { counts, esc, zero, all, acc } = quantiseSample(x, g, steps, m);
  const delta = new Float64Array(2 * nb);
  let bits = PLANE_FIXED_BITS;
  let error = 0;
  let energy = 0;
  for (let b = 0; b < nb; b++) {
    const w = g.sampleWeight[b];
    const gain = g.bands[b].gain;
    let n = 0;
    for (let k = 0; k <= CAP; k++) n += counts[b * (CAP + 1) + k];
    if (!n) continue;
    let h = esc[b] + n - counts[b * (CAP + 1)];
    for (let k = 0; k <= CAP; k++) {
      const c = counts[b * (CAP + 1) + k];
      if (c > 0) h -= c * Math.log2(c / n);
    }
    bits += w * h;
    let e = zero[b];
    for (let cls = 0; cls < 2; cls++) {
      const [cnt, s1, s2] = [acc[b * 6 + 3 * cls], acc[b * 6 + 3 * cls + 1], acc[b * 6 + 3 * cls + 2]];
      if (!cnt) continue;
      const d =
        w * cnt >= MIN_OFFSET_COUNT
          ? Math.min(OFFSET_MAX, Math.max(OFFSET_MIN, Math.round((OFFSET_UNIT * s1) / cnt) / OFFSET_UNIT))
          : 0;
      delta[2 * b + cls] = d;
      e += steps[b] * steps[b] * (s2 - 2 * d * s1 + d * d * cnt);
    }
    error += gain * w * e;
    energy += gain * w * all[b];
  }
  if (deq)
    for (let s = 0; s < x.length; s++) {
      const q = m[s];
      if (q === 0) {
        deq[s] = 0;
        continue;
      }
      const b = g.sampleBand[s];
      const r = (q + delta[2 * b + (q === 1 ? 0 : 1)]) * steps[b];
      deq[s] = x[s] < 0 ? -r : r;
    }
  return { bits, error, energy };
}

/** Pixel-domain energy of a sampled plane (Σ_b g_b·Σx², scaled to the whole band). */
export function sampleEnergy(x: Float64Array, g: StackGeometry): number {
  let e = 0;
  for (let s = 0; s < x.length; s++) {
    const b = g.sampleBand[s];
    e += g.bands[b].gain * g.sampleWeight[b] * x[s] * x[s];
  }
  return e;
}
