/**
 * The rate control's quick estimates for the wavelet plane coder (./wavelet-plane): coded size and squared
 * error at a quantiser step, from a deterministic sample of each band's coefficient magnitudes, sorted once
 * per analysed plane. Re-exported by ./wavelet-plane.
 */
import { bandSteps, DEAD_ZONE_RHO } from './band-steps';
import type { AnalysedPlane } from './wavelet-plane';

/**
 * Coefficients the rate model looks at: every RATE_STRIDE-th (a prime, so no band or row pattern aliases);
 * every LARGE_STRIDE-th (also prime) in planes of more than LARGE_PLANE coefficients, which still leaves
 * over 130 000 samples and saves sorting a million values per plane.
 */
const RATE_STRIDE = 7;
const LARGE_STRIDE = 31;
const LARGE_PLANE = 1 << 22;
const strideOf = (a: AnalysedPlane) => (a.width * a.height > LARGE_PLANE ? LARGE_STRIDE : RATE_STRIDE);
const RATE_CAP = 16;

/** Per band, the sorted magnitudes of a deterministic 1-in-stride sample (built once per plane). */
const sampleCache = new WeakMap<AnalysedPlane, Float64Array[]>();
function sortedSample(a: AnalysedPlane): Float64Array[] {
  const hit = sampleCache.get(a);
  if (hit) return hit;
  // The coefficients at i = 0, stride, 2·stride, … taken band by band (the bands tile the plane), each band's
  // list sorted: the same lists as one pass in index order, without a band map or growing arrays.
  const stride = strideOf(a);
  const { width, coeffs: x } = a;
  const firstIn = (row: number) => row + ((stride - (row % stride)) % stride);
  const out = a.bands.map((b) => {
    let count = 0;
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      const first = firstIn(row);
      if (first < row + b.w) count += Math.floor((row + b.w - 1 - first) / stride) + 1;
    }
    const v = new Float64Array(count);
    let k = 0;
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      for (let i = firstIn(row); i < row + b.w; i += stride) v[k++] = Math.abs(x[i]);
    }
    return v.sort();
  });
  sampleCache.set(a, out);
  return out;
}

/** Index of the first value ≥ t in a sorted array. */
function lowerBound(v: Float64Array, t: number): number {
  let lo = 0;
  let hi = v.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (v[mid] < t) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * A quick estimate of {@link codeAnalysed}'s size in bits at step `step`, for rate control: the zeroth-order
 * entropy of each band's quantised magnitudes (0…15, then an Exp-Golomb escape) plus one bit per sign, on a
 * deterministic 1-in-7 (1-in-31 in large planes) sample of the coefficients (sorted once per plane, so a step costs a few binary
 * searches per band). The range coder's contexts do better than this, so callers calibrate it with the ratio
 * of a real encode to the estimate (common practice; see {@link codeAnalysed} for the real coder).
 */
export function estimateBits(a: AnalysedPlane, step: number): number {
  const { bands } = a;
  const steps = bandSteps(bands, step);
  const sample = sortedSample(a);
  let bits = 0;
  const atLeast = new Float64Array(RATE_CAP + 2);
  for (let b = 0; b < bands.length; b++) {
    const v = sample[b];
    const n = v.length;
    if (!n) continue;
    const rho = bands[b].orient === 0 ? 0.5 : DEAD_ZONE_RHO;
    // atLeast[m] = how many sampled magnitudes quantise to ≥ m: |x|/Δ_b + ρ ≥ m ⇔ |x| ≥ (m − ρ)·Δ_b.
    atLeast[0] = n;
    for (let m = 1; m <= RATE_CAP; m++) atLeast[m] = n - lowerBound(v, (m - rho) * steps[b]);
    bits += atLeast[1]; // signs
    for (let m = 0; m <= RATE_CAP; m++) {
      const c = m < RATE_CAP ? atLeast[m] - atLeast[m + 1] : atLeast[RATE_CAP];
      if (c > 0) bits -= c * Math.log2(c / n);
    }
    for (let i = n - atLeast[RATE_CAP]; i < n; i++) {
      const m = Math.floor(v[i] / steps[b] + rho);
      bits += 2 * Math.log2(Math.max(1, m - RATE_CAP + 2)) + 1;
    }
  }
  return bits * strideOf(a) + 8;
}

/**
 * A quick estimate of {@link codedSquaredError} at step `step` for rate control, on the same sample
 * as {@link estimateBits}: each sampled coefficient quantised by the dead-zone rule and rebuilt at the
 * centroid of its bin class (|q| = 1, |q| ≥ 2) in its band, as coder 2's reconstruction offsets do
 * (unrounded); the band errors weighted by the synthesis gains and scaled by the sampling stride.
 */
export function estimateSquaredError(a: AnalysedPlane, step: number): number {
  const { bands } = a;
  const steps = bandSteps(bands, step);
  const sample = sortedSample(a);
  let e = 0;
  for (let b = 0; b < bands.length; b++) {
    const v = sample[b];
    const d = steps[b];
    const rho = bands[b].orient === 0 ? 0.5 : DEAD_ZONE_RHO;
    // Σ over a bin class of (|c| − (m + δ)Δ)² with δ the class mean of |c|/Δ − m: Σr² − (Σr)²/n, r = |c| − mΔ.
    let zero = 0;
    const s = [0, 0];
    const s2 = [0, 0];
    const n = [0, 0];
    for (let i = 0; i < v.length; i++) {
      const m = Math.floor(v[i] / d + rho);
      if (m === 0) {
        zero += v[i] * v[i];
        continue;
      }
      const r = v[i] - m * d;
      const k = m === 1 ? 0 : 1;
      s[k] += r;
      s2[k] += r * r;
      n[k]++;
    }
    let band = zero;
    for (let k = 0; k < 2; k++) if (n[k]) band += s2[k] - (s[k] * s[k]) / n[k];
    e += bands[b].gain * band;
  }
  return e * strideOf(a);
}
