/**
 * Rate control for the stack layout: find the quantiser step (and the number of eigen-frames) that
 * meets a byte budget for the whole series, or a per-frame quality floor (the worst frame must meet it).
 *
 * Method: a bracketing + false-position search on log Δ, first with the per-component λ rule of stack-codec.ts, then a choice of
 * the eigen-frame count k among a few candidates by the Lagrangian J = SSE + λ·bytes at that step
 * (Everett's generalised Lagrange multipliers — H. Everett, Operations Research 11(3), 1963; Shoham &
 * Gersho, IEEE Trans. ASSP 36(9), 1988 — from memory), then a second search with k fixed.
 * File size falls and distortion rises with Δ (monotone in practice, not guaranteed); the search keeps
 * the best feasible point it has seen, so the answer always meets the target when one was found.
 */
import { encodeStack, framePsnr, frameSsim } from './stack-codec';
import { type EncodedStack, type PreparedStack, recordFrameQuality } from './stack-header';

export interface StackTarget {
  /** Largest file in bytes (container included). */
  maxBytes?: number;
  /** Every frame's PSNR must be at least this (dB). */
  minPsnr?: number;
  /** Every frame's SSIM must be at least this. */
  minSsim?: number;
  /** Fixed number of eigen-frames per channel; without other targets the basis is coded finely, no residuals. */
  rank?: number;
  /** Code per-frame residuals where they pay (default true; false with `rank` alone). */
  residuals?: boolean;
}

export interface StackFit {
  encoded: EncodedStack;
  psnr: number[];
  ssim: number[];
  /** Encodes tried. */
  evaluations: number;
}

/** Step of a `--rank K` only encode, in grey levels of 8-bit data (scaled for 16-bit): near-lossless basis. */
const RANK_ONLY_STEP = 0.5;
/** Most encodes of the first step search (bracketing + false position) over Δ ∈ [0.02, 1024]·scale. */
const SEARCH_EVALS = 12;
/** Most encodes of the second search, started at the first answer, once k is fixed. */
const REFINEMENTS = 6;
/** The search stops when the bracket on Δ is narrower than 1%. */
const STEP_TOLERANCE = 0.01;
const RANK_CANDIDATES = [0, 1, 2, 4, 8, 16, 32, 64];

export class StackTargetError extends Error {
  constructor(
    message: string,
    readonly best?: StackFit,
  ) {
    super(message);
    this.name = 'StackTargetError';
  }
}

/**
 * Fit a prepared series to a target.
 * @param onProgress - called with a fraction in [0, 1] after each encode.
 * @throws StackTargetError when the target cannot be met (message says by how much).
 */
export function fitStack(
  prep: PreparedStack,
  target: StackTarget,
  onProgress?: (f: number) => void,
): StackFit {
  const scale = prep.input.bitDepth === 16 ? 257 : 1;
  let evaluations = 0;
  const total = SEARCH_EVALS + REFINEMENTS + RANK_CANDIDATES.length + 2;
  const floors = target.minPsnr !== undefined || target.minSsim !== undefined;
  const evaluate = (step: number, rank: number | undefined, residuals: boolean): StackFit => {
    const encoded = encodeStack(prep, { step, rank, residuals });
    evaluations++;
    onProgress?.(Math.min(1, evaluations / total));
    const psnr = framePsnr(prep.input, encoded.decoded);
    const ssim = target.minSsim !== undefined ? frameSsim(prep.input, encoded.decoded) : [];
    return { encoded, psnr, ssim, evaluations };
  };
  const meetsFloors = (f: StackFit) =>
    (target.minPsnr === undefined || Math.min(...f.psnr) >= target.minPsnr) &&
    (target.minSsim === undefined || Math.min(...f.ssim) >= target.minSsim);
  const fitsBytes = (f: StackFit) =>
    target.maxBytes === undefined || f.encoded.bytes.length <= target.maxBytes;

  if (!floors && target.maxBytes === undefined) {
    const rank = target.rank ?? Math.min(prep.eigen[0].length, 8);
    return finish(evaluate(RANK_ONLY_STEP * scale, rank, target.residuals ?? target.rank === undefined));
  }
  const residuals = target.residuals ?? true;

  /** Signed violation of the target (≤ 0 = met): log byte ratio, or dB (and 100·SSIM) short of the floors. */
  const violation = (f: StackFit): number => {
    if (!floors) return Math.log(f.encoded.bytes.length / (target.maxBytes as number));
    let v = Number.NEGATIVE_INFINITY;
    if (target.minPsnr !== undefined) v = Math.max(v, target.minPsnr - Math.min(...f.psnr));
    if (target.minSsim !== undefined) v = Math.max(v, 100 * (target.minSsim - Math.min(...f.ssim)));
    return v;
  };
  const uMin = Math.log(0.02 * scale);
  const uMax = Math.log(1024 * scale);
  /**
   * Find the boundary in u = log Δ where the target starts to fail: bracket it by doubling moves, then
   * regula falsi (false position) between the feasible and infeasible probes, clamped so each probe cuts
   * the bracket by at least 15%. Returns the best feasible fit and the nearest infeasible probe.
   */
  const bisect = (rank: number | undefined, u0: number, span: number, maxEvals: number) => {
    let best: StackFit | undefined;
    let a: { u: number; s: number } | undefined;
    let b: { u: number; s: number; f: StackFit } | undefined;
    const towardFeasible = floors ? -1 : 1;
    let u = Math.min(uMax, Math.max(uMin, u0));
    let move = span;
    for (let it = 0; it < maxEvals; it++) {
      const f = evaluate(Math.exp(u), rank, residuals);
      const sv = violation(f);
      const ok = sv <= 0 && meetsFloors(f) && fitsBytes(f);
      if (sv <= 0) {
        if (!a || (floors ? u > a.u : u < a.u)) a = { u, s: sv };
        if (
          ok &&
          (!best ||
            (floors ? f.encoded.bytes.length < best.encoded.bytes.length : mean(f.psnr) > mean(best.psnr)))
        )
          best = f;
      } else if (!b || (floors ? u < b.u : u > b.u)) b = { u, s: sv, f };
      let next: number;
      if (a && b) {
        if (Math.abs(a.u - b.u) < STEP_TOLERANCE) break;
        // Violations can be ±∞ (a frame decoded exactly has PSNR ∞): fall back to the midpoint then.
        const raw = (0 - a.s) / (b.s - a.s);
        const frac = Number.isFinite(raw) ? Math.min(0.85, Math.max(0.15, raw)) : 0.5;
        next = a.u + frac * (b.u - a.u);
      } else {
        next = a ? u - towardFeasible * move : u + towardFeasible * move;
        move *= 2;
        if ((next <= uMin && u <= uMin) || (next >= uMax && u >= uMax)) break;
        next = Math.min(uMax, Math.max(uMin, next));
      }
      u = next;
    }
    return { best, closest: b?.f };
  };

  let first = bisect(target.rank, Math.log(4 * scale), Math.log(4), SEARCH_EVALS);
  if (!first.best) {
    // One more try at the extreme end of the range before giving up.
    const edge = floors
      ? evaluate(0.02 * scale, target.rank, residuals)
      : evaluate(1024 * scale, target.rank, residuals);
    if (meetsFloors(edge) && fitsBytes(edge)) first = { best: edge, closest: edge };
    else throw new StackTargetError(describeMiss(target, edge, prep), edge);
  }
  let best = first.best as StackFit;
  if (target.rank === undefined) {
    // Choose k by the Lagrangian at the step found, then refine the step with k fixed.
    const step = best.encoded.header.step;
    const lambda = ((16 * Math.LN2) / 12) * step * step;
    const kmax = prep.eigen[0].length;
    let bestJ = Number.POSITIVE_INFINITY;
    let bestK = best.encoded.header.ranks[0];
    const kRule = best.encoded.header.ranks[0];
    // Candidates far above the λ rule's own count never won in the benchmark; skip them to save encodes.
    const candidates = RANK_CANDIDATES.filter((r) => r <= kmax && r <= Math.max(4, 2 * kRule));
    for (const k of candidates.includes(kRule) ? candidates : candidates.concat(kRule)) {
      const f = evaluate(step, k, residuals);
      const J = sseOf(f, prep) + lambda * f.encoded.bytes.length;
      if (J < bestJ) {
        bestJ = J;
        bestK = k;
      }
    }
    const second = bisect(bestK, Math.log(step), Math.log(1.25), REFINEMENTS);
    if (second.best) {
      const better = floors
        ? second.best.encoded.bytes.length < best.encoded.bytes.length
        : mean(second.best.psnr) > mean(best.psnr);
      if (better) best = second.best;
    }
  }
  return finish(best);

  function finish(f: StackFit): StackFit {
    const ssim = f.ssim.length ? f.ssim : frameSsim(prep.input, f.encoded.decoded);
    return { ...f, encoded: recordFrameQuality(f.encoded, f.psnr, ssim), ssim, evaluations };
  }
}

function mean(a: number[]): number {
  let s = 0;
  for (const v of a) s += Number.isFinite(v) ? v : 200;
  return s / a.length;
}

function sseOf(f: StackFit, prep: PreparedStack): number {
  let s = 0;
  prep.input.frames.forEach((fr, j) => {
    for (let c = 0; c < fr.planes.length; c++) {
      const a = fr.planes[c];
      const b = f.encoded.decoded[j][c];
      for (let p = 0; p < a.length; p++) s += (a[p] - b[p]) ** 2;
    }
  });
  return s;
}

function describeMiss(target: StackTarget, edge: StackFit, prep: PreparedStack): string {
  const bytes = edge.encoded.bytes.length;
  const raw =
    prep.input.width *
    prep.input.height *
    prep.input.channels *
    prep.input.frames.length *
    (prep.input.bitDepth / 8);
  if (target.minPsnr !== undefined || target.minSsim !== undefined) {
    const worst = Math.min(...edge.psnr);
    const parts = [];
    if (target.minPsnr !== undefined)
      parts.push(`worst-frame PSNR ${worst.toFixed(2)} dB against --min-psnr ${target.minPsnr}`);
    if (target.minSsim !== undefined)
      parts.push(
        `worst-frame SSIM ${Math.min(...edge.ssim).toFixed(4)} against --min-ssim ${target.minSsim}`,
      );
    if (target.maxBytes !== undefined && bytes > target.maxBytes)
      return `the quality floor needs more than the budget: the finest stack file meeting it is not within ${target.maxBytes} bytes (${parts.join(', ')}); raise the budget or lower the floor`;
    return `the quality floor cannot be met even at the finest step (${parts.join(', ')}, ${bytes} bytes of ${raw} raw); lower the floor`;
  }
  return `the budget of ${target.maxBytes} bytes is too small for this series: the smallest stack file is ${bytes} bytes; raise the budget`;
}
