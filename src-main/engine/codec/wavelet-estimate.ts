/**
 * The rate control's quick estimates for the wavelet plane coder (./wavelet-plane): coded size and squared
 * error at a quantiser step, from a deterministic sample of each band's coefficient magnitudes, sorted once
 * per analysed plane. Re-exported by ./wavelet-plane.
 */
import { bandSteps, DEAD_ZONE_RHO } from './band-steps';
import { residentSample } from './resident-sample';
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
  const { width } = a;
  // A resident plane's lists come from its arena's kernel (the same lists: ./resident-sample).
  const resident = residentSample(a, a.bands, width, stride);
  if (resident) {
    sampleCache.set(a, resident);
    return resident;
  }
  const x = a.coeffs;
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
  return remembered(bitsMemo, a, step, estimateBitsAt);
}

function estimateBitsAt(a: AnalysedPlane, step: number): number {
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
/**
 * A bin's upper edge (m + 1 − ρ)·Δ scaled by this stays below every |c| whose ⌊|c|/Δ + ρ⌋ is m + 1: the
 * margin (10⁻¹² relative) is thousands of times the few units in the last place that rounding moves |c|/Δ + ρ.
 */
const BIN_EDGE_MARGIN = 1 - 1e-12;

export function estimateSquaredError(a: AnalysedPlane, step: number): number {
  return remembered(errorMemo, a, step, estimateSquaredErrorAt);
}

function estimateSquaredErrorAt(a: AnalysedPlane, step: number): number {
  const { bands } = a;
  const steps = bandSteps(bands, step);
  const sample = sortedSample(a);
  const squares = sampleSquares(a);
  let e = 0;
  for (let b = 0; b < bands.length; b++) {
    const v = sample[b];
    const d = steps[b];
    const rho = bands[b].orient === 0 ? 0.5 : DEAD_ZONE_RHO;
    // Σ over a bin class of (|c| − (m + δ)Δ)² with δ the class mean of |c|/Δ − m: Σr² − (Σr)²/n, r = |c| − mΔ.
    // The bin ⌊|c|/Δ + ρ⌋ never falls as |c| grows (correctly rounded steps), so the zeros are a prefix of the
    // sorted sample, and their Σ|c|² is the prefix sum (added in the same order as a loop over them would).
    let z = 0;
    let hi = v.length;
    while (z < hi) {
      const mid = (z + hi) >> 1;
      if (Math.floor(v[mid] / d + rho) === 0) z = mid + 1;
      else hi = mid;
    }
    // Past the zeros, a sample below `next` is in the same bin as the one before it (next lies a margin under
    // the bin's upper edge, far more than the rounding of |c|/Δ + ρ), so the bin is only worked out again
    // at or past `next`: the same bins, hence the same sums, as working it out for every sample.
    let m = 0;
    let next = Number.NEGATIVE_INFINITY;
    let s1 = 0;
    let q1 = 0;
    let n1 = 0;
    let s2 = 0;
    let q2 = 0;
    let n2 = 0;
    for (let i = z; i < v.length; i++) {
      const x = v[i];
      if (!(x < next)) {
        m = Math.floor(x / d + rho);
        next = (m + 1 - rho) * d * BIN_EDGE_MARGIN;
      }
      const r = x - m * d;
      if (m === 1) {
        s1 += r;
        q1 += r * r;
        n1++;
      } else {
        s2 += r;
        q2 += r * r;
        n2++;
      }
    }
    let band = squares[b][z];
    if (n1) band += q1 - (s1 * s1) / n1;
    if (n2) band += q2 - (s2 * s2) / n2;
    e += bands[b].gain * band;
  }
  return e * strideOf(a);
}

/**
 * Build `a`'s sample for the estimates (sorted magnitudes, running sums of squares) now, where a thread would
 * otherwise wait for another: every estimate is the same number whenever the sample was built.
 */
export function prepareEstimates(a: AnalysedPlane): void {
  sampleSquares(a);
}

/** Per band, the running sums of the sorted sample's squares: entry i is v₀² + … + v_{i−1}², added in order. */
const squaresCache = new WeakMap<AnalysedPlane, Float64Array[]>();
function sampleSquares(a: AnalysedPlane): Float64Array[] {
  const hit = squaresCache.get(a);
  if (hit) return hit;
  const out = sortedSample(a).map((v) => {
    const p = new Float64Array(v.length + 1);
    let sum = 0;
    for (let i = 0; i < v.length; i++) {
      sum += v[i] * v[i];
      p[i + 1] = sum;
    }
    return p;
  });
  squaresCache.set(a, out);
  return out;
}

/**
 * Estimates already computed, per plane and step: rate control's bisections ask again for the same steps
 * (every bisection over the same interval starts at the same midpoints). Bounded per plane.
 */
const MEMO_SIZE = 4096;
const bitsMemo = new WeakMap<AnalysedPlane, Map<number, number>>();
const errorMemo = new WeakMap<AnalysedPlane, Map<number, number>>();
function remembered(
  memo: WeakMap<AnalysedPlane, Map<number, number>>,
  a: AnalysedPlane,
  step: number,
  f: (a: AnalysedPlane, step: number) => number,
): number {
  let m = memo.get(a);
  if (!m) {
    m = new Map();
    memo.set(a, m);
  }
  let v = m.get(step);
  if (v === undefined) {
    if (m.size >= MEMO_SIZE) m.clear();
    v = f(a, step);
    m.set(step, v);
  }
  return v;
}
