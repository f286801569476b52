/**
 * Rate control for the stack layout: find the quantiser step (and the number of eigen-frames) that
 * meets a byte budget for the whole series, or a per-frame quality floor (the worst frame must meet it).
 *
 * Method: bisection on log Δ, first with the per-component λ rule of stack-codec.ts, then a choice of
 * the eigen-frame count k among a few candidates by the Lagrangian J = SSE + λ·bytes at that step
 * (Everett's generalised Lagrange multipliers — H. Everett, Operations Research 11(3), 1963; Shoham &
 * Gersho, IEEE Trans. ASSP 36(9), 1988 — from memory), then a second bisection with k fixed.
 * File size falls and distortion rises with Δ (monotone in practice, not guaranteed); the search keeps
 * the best feasible point it has seen, so the answer always meets the target when one was found.
 */
import { type EncodedStack, encodeStack, framePsnr, frameSsim, type PreparedStack } from './stack-codec';

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
/** Halvings of the log-step bracket [0.02, 1024]·scale: 11 give Δ to about 1%. */
const BISECTIONS = 11;
/** Halvings of the narrow bracket [Δ/2, 2Δ] around the first answer, once k is fixed. */
const REFINEMENTS = 7;
const RANK_CANDIDATES = [0, 1, 2, 3, 4, 6, 8, 12, 16, 24, 32, 48, 64];

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
  const total = BISECTIONS + REFINEMENTS + RANK_CANDIDATES.length + 2;
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

  /** Bisection on log step; returns the best feasible fit (or undefined) and the last probe. */
  const bisect = (
    rank: number | undefined,
    lo = Math.log(0.02 * scale),
    hi = Math.log(1024 * scale),
    iterations = BISECTIONS,
  ) => {
    let best: StackFit | undefined;
    let closest: StackFit | undefined;
    for (let it = 0; it < iterations; it++) {
      const mid = (lo + hi) / 2;
      const f = evaluate(Math.exp(mid), rank, residuals);
      const ok = meetsFloors(f) && fitsBytes(f);
      if (ok) {
        // Floors: prefer the smallest file; bytes only: prefer the best quality.
        if (
          !best ||
          (floors ? f.encoded.bytes.length < best.encoded.bytes.length : mean(f.psnr) > mean(best.psnr))
        )
          best = f;
      } else closest = f;
      if (floors) {
        if (meetsFloors(f)) lo = mid;
        else hi = mid;
      } else if (fitsBytes(f)) hi = mid;
      else lo = mid;
    }
    return { best, closest };
  };

  let first = bisect(target.rank);
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
    for (const k of RANK_CANDIDATES.filter((r) => r <= kmax).concat(best.encoded.header.ranks[0])) {
      const f = evaluate(step, k, residuals);
      const J = sseOf(f, prep) + lambda * f.encoded.bytes.length;
      if (J < bestJ) {
        bestJ = J;
        bestK = k;
      }
    }
    const second = bisect(bestK, Math.log(step / 2), Math.log(step * 2), REFINEMENTS);
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
    return { ...f, ssim, evaluations };
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
