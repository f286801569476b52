/**
 * The stack layout's allocation by equal slope, predicted from statistics (./stack-rate) without coding.
 *
 * At one pixel-domain step Δ — the same for every eigen-frame and residual, Δ/√N for the mean frame (its
 * error reaches all N frames) — the slope is λ = 16·ln2·Δ²/12 per byte (the high-rate slope of a uniform
 * quantiser, D = Δ²/12 per sample and 6.02 dB per bit; common practice). Per coded channel, the number of
 * eigen-frames k minimises the Lagrangian J = D + λ·bytes (Everett, Operations Research 11(3), 1963;
 * Shoham & Gersho, IEEE Trans. ASSP 36(9), 1988 — from memory), and frame j's residual is kept when the
 * squared error it removes is at least λ per byte. The residual after k eigen-frames is predicted on the
 * sample as W(F_j) − Ŵ(μ) − d_j·W(1) − Σ_{i<k} V_ji·Ŵ(P_i) (V_ji: the frame's weight in the SVD, which the
 * encoder's least-squares refit changes little), so it includes the quantisation error of the mean and the
 * basis. {@link solveStep} then finds the Δ at which the predicted file fits a byte target.
 */
import type { ChannelAnalysis, StackAnalysis } from './stack-analysis';
import { estimatePlane, type PlaneEstimate, sampleEnergy } from './stack-rate';

/** λ per byte in units of Δ²: 8 bits · 2·ln2 · (1/12). */
export const LAMBDA_PER_BYTE = (16 * Math.LN2) / 12;
/** Eigen-frame counts the planner compares (capped by the series). */
const RANK_CANDIDATES = [0, 1, 2, 3, 4, 6, 8, 12, 16, 24, 32, 48, 64];
/** A real encode tries a residual predicted to remove at least this fraction of λ per byte. */
const TRY_SLACK = 0.5;

/** Real bytes over predicted bytes, per kind of plane (1 = the raw estimate). */
export interface RateCalibration {
  /** The mean frame (measured apart: a smooth mean codes unlike the eigen-frames). */
  mean: number;
  /** The eigen-frames. */
  basis: number;
  residual: number;
}

/**
 * Starting ratios of coder 2's bytes to the order-0 estimate, before a real encode measures them
 * (measured on the seeded series of test/stack/rate-model.test.ts; refined after every real encode).
 */
export const DEFAULT_CALIBRATION: RateCalibration = { mean: 0.9, basis: 0.9, residual: 1.05 };

interface ChannelPlan {
  rank: number;
  residual: boolean[];
  /** Frames whose residual a real encode should try (predicted to pay, or nearly). */
  tryResidual: boolean[];
  /** Predicted, calibrated bytes of the mean, the eigen-frames and the residuals (coefficients apart). */
  baseBytes: number;
  residualBytes: number;
  /** Predicted pixel-domain squared error per frame. */
  frameError: Float64Array;
  /** Raw (uncalibrated) predicted bytes of each frame's residual at this rank. */
  residualRaw: Float64Array;
  /** Raw (uncalibrated) predicted bytes of the mean frame and of the eigen-frames. */
  meanRaw: number;
  basisRaw: number;
}

export interface StackPlan {
  step: number;
  channels: ChannelPlan[];
  /** Predicted file size, container and header included. */
  bytes: number;
  /** Predicted total squared error over every frame and channel. */
  error: number;
}

export interface PlanOptions {
  residuals: boolean;
  /** Fixed eigen-frame count for every channel (capped by the series). */
  rank?: number;
  /** Fixed eigen-frame counts, one per channel (overrides `rank`). */
  ranks?: number[];
  calibration: RateCalibration;
  /** Bytes of everything but the coded planes and coefficients, for a file of `chunks` chunks. */
  fixedBytes(chunks: number): number;
}

/** Plan one channel at step `step`. */
function planChannel(
  ch: ChannelAnalysis,
  an: StackAnalysis,
  step: number,
  o: PlanOptions,
  fixed: number | undefined,
): ChannelPlan {
  const g = an.geometry;
  const N = ch.frames.length;
  const lambda = LAMBDA_PER_BYTE * step * step;
  const S = g.sample.length;
  const deqMean = new Float64Array(S);
  const meanBits = estimatePlane(ch.meanSample, g, step / Math.sqrt(N), deqMean).bits;
  // The λ rule on its own: eigen-frames whose coding removes at least λ per byte (their energy is σ_i²).
  // Counts beyond twice its answer (and beyond 4) are not compared: they never won on the benchmark series.
  const deqBasis: Float64Array[] = [];
  const basisBits: number[] = [];
  const limit = fixed !== undefined ? Math.min(fixed, ch.maxRank) : ch.maxRank;
  let kRule = 0;
  for (let i = 0; i < limit; i++) {
    if (fixed === undefined && i >= Math.max(4, 2 * kRule)) break;
    const d = new Float64Array(S);
    const e = estimatePlane(ch.basisSample(i), g, step, d);
    const bytes = (e.bits / 8) * o.calibration.basis + 4 * N;
    if (kRule === i && ch.svd.sigma[i] ** 2 - e.error >= lambda * bytes) kRule++;
    basisBits.push(e.bits);
    deqBasis.push(d);
  }
  const top = deqBasis.length;
  const ranks = fixed !== undefined ? [top] : RANK_CANDIDATES.filter((k) => k < top).concat([top]);
  // est[r][j]: frame j's residual after ranks[r] eigen-frames.
  const est: PlaneEstimate[][] = ranks.map(() => []);
  const R = new Float64Array(S);
  for (let j = 0; j < N; j++) {
    const F = ch.frameSamples[j];
    const d = ch.svd.offsets[j];
    for (let s = 0; s < S; s++) R[s] = F[s] - deqMean[s] - d * ch.onesSample[s];
    let r = 0;
    for (let k = 0; k <= top; k++) {
      if (ranks[r] === k) {
        est[r][j] = o.residuals
          ? estimatePlane(R, g, step)
          : { bits: 0, error: 0, energy: sampleEnergy(R, g) };
        r++;
      }
      if (k === top) break;
      const w = ch.svd.V[j * N + k];
      const P = deqBasis[k];
      for (let s = 0; s < S; s++) R[s] -= w * P[s];
    }
  }
  let best: ChannelPlan | undefined;
  let bestJ = Number.POSITIVE_INFINITY;
  ranks.forEach((k, r) => {
    const meanRaw = meanBits / 8;
    let basisRaw = 0;
    for (let i = 0; i < k; i++) basisRaw += basisBits[i] / 8;
    const residual: boolean[] = [];
    const tryResidual: boolean[] = [];
    const frameError = new Float64Array(N);
    const residualRaw = new Float64Array(N);
    let residualBytes = 0;
    let D = 0;
    for (let j = 0; j < N; j++) {
      const e = est[r][j];
      residualRaw[j] = e.bits / 8;
      const bytes = (e.bits / 8) * o.calibration.residual;
      const keep = o.residuals && e.energy - e.error >= lambda * bytes;
      residual.push(keep);
      tryResidual.push(o.residuals && e.energy - e.error >= TRY_SLACK * lambda * bytes);
      if (keep) residualBytes += bytes;
      frameError[j] = keep ? e.error : e.energy;
      D += frameError[j];
    }
    const baseBytes = meanRaw * o.calibration.mean + basisRaw * o.calibration.basis;
    const J = D + lambda * (baseBytes + residualBytes + 4 * N * (k + 1));
    if (J < bestJ) {
      bestJ = J;
      best = {
        rank: k,
        residual,
        tryResidual,
        baseBytes,
        residualBytes,
        frameError,
        residualRaw,
        meanRaw,
        basisRaw,
      };
    }
  });
  return best as ChannelPlan;
}

/** The allocation at step `step`, with its predicted size and error. */
export function planAt(an: StackAnalysis, step: number, o: PlanOptions): StackPlan {
  const channels = an.channels.map((ch, c) => planChannel(ch, an, step, o, o.ranks?.[c] ?? o.rank));
  let bytes = 0;
  let error = 0;
  let chunks = 3; // HEAD, SHSH, SQAL
  for (const [c, p] of channels.entries()) {
    const N = an.channels[c].frames.length;
    const kept = p.residual.filter(Boolean).length;
    chunks += 2 + p.rank + kept;
    bytes += p.baseBytes + p.residualBytes + 4 * N * (p.rank + 1);
    for (const e of p.frameError) error += e;
  }
  return { step, channels, bytes: bytes + o.fixedBytes(chunks), error };
}

/** Search bounds on log Δ, in grey levels of 8-bit data (times `scale` for 16-bit). */
const STEP_MIN = 0.02;
const STEP_MAX = 2048;
const MAX_PLANS = 16;
/** The model's size is solved to 1% (log ratio): the real encodes that follow correct the rest. */
const SOLVE_TOLERANCE = 0.01;

/**
 * The plan whose predicted size is at most `target` bytes and closest to it: bracket log Δ by doubling
 * moves from `u0`, then false position on log size (clamped to cut the bracket by ≥ 15% each time).
 * Returns the largest step's plan when even that is over the target.
 */
export function solveStep(
  an: StackAnalysis,
  target: number,
  o: PlanOptions,
  scale: number,
  u0 = Math.log(4 * scale),
): StackPlan {
  const uMin = Math.log(STEP_MIN * scale);
  const uMax = Math.log(STEP_MAX * scale);
  let lo: { u: number; f: number; p: StackPlan } | undefined; // over the target (step too small)
  let hi: { u: number; f: number; p: StackPlan } | undefined; // within the target
  let u = Math.min(uMax, Math.max(uMin, u0));
  let move = Math.log(2);
  for (let it = 0; it < MAX_PLANS; it++) {
    const p = planAt(an, Math.exp(u), o);
    const f = Math.log(p.bytes / target);
    if (f > 0) {
      if (!lo || u > lo.u) lo = { u, f, p };
    } else if (!hi || u < hi.u) hi = { u, f, p };
    if (hi && hi.f > -SOLVE_TOLERANCE) break;
    if (lo && hi) {
      if (hi.u - lo.u < SOLVE_TOLERANCE) break;
      const frac = Math.min(0.85, Math.max(0.15, lo.f / (lo.f - hi.f)));
      u = lo.u + frac * (hi.u - lo.u);
    } else {
      const next = Math.min(uMax, Math.max(uMin, lo ? u + move : u - move));
      if (next === u) break;
      u = next;
      move *= 2;
    }
  }
  return (hi ?? lo)?.p as StackPlan;
}
