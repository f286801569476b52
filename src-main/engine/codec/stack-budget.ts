/**
 * Rate control for the stack layout: meet a byte budget for the whole series, or a per-frame quality floor
 * (the worst frame must meet it).
 *
 * Byte budgets ({@link fitBytes}): the rate model of ./stack-rate and the equal-slope planner of
 * ./stack-plan predict, from coefficient statistics alone, the bytes and squared error of every plane at a
 * step Δ and choose the eigen-frame counts and residuals there; the step is solved on the model so that the
 * predicted file fits. Then real encodes: the first one calibrates the model (real bytes over predicted,
 * for the basis and for the residuals, and the exact header and framing), the second is the re-solved plan,
 * the third (when needed) aims by the secant of log size over log Δ through the two before. At most
 * {@link MAX_ENCODES} real encodes when the model is within its usual error; a file that still misses the
 * budget gets further steps (each Δ larger by the measured ratio) until it fits, and these are counted in
 * `evaluations`.
 * Floors: a bracketing + false-position search on log Δ over real encodes (each encode's eigen-frame counts
 * chosen by the planner at its step), as PSNR and SSIM are measured on the decoded frames.
 */
import { encodeStack } from './stack-codec';
import { assemble, encodePlanned, fixedBytesFor, paying } from './stack-encode';
import { type EncodedStack, type PreparedStack, recordFrameQuality } from './stack-header';
import { DEFAULT_CALIBRATION, type PlanOptions, planAt, type StackPlan, solveStep } from './stack-plan';
import { measureFrames } from './stack-quality';

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
const SEARCH_EVALS = 14;
/** The search stops when the bracket on Δ is narrower than 1%. */
const STEP_TOLERANCE = 0.01;
/** Real encodes of a byte budget when the model lands it. */
export const MAX_ENCODES = 3;
/** A byte budget is landed when the file is within this fraction under it. */
const LANDING = 0.015;
/** The model aims this fraction under the budget. */
const AIM = 0.005;
/** A real encode within this log ratio of the budget lands it by choosing its residuals again. */
const RESELECT_RANGE = 0.1;
/** Compact framing of one chunk (type, id and length varints), about. */
const CHUNK_FRAMING = 8;

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
 * @param fitOptions.deferQuality - when no floor needs them, leave the final file's PSNR and SSIM unmeasured
 * (`psnr` and `ssim` empty, SQAL not recorded) for the caller to measure, e.g. on several threads, and
 * record with {@link withFrameQuality}.
 * @throws StackTargetError when the target cannot be met (message says by how much).
 */
export function fitStack(
  prep: PreparedStack,
  target: StackTarget,
  onProgress?: (f: number) => void,
  fitOptions: { deferQuality?: boolean } = {},
): StackFit {
  const scale = prep.input.bitDepth === 16 ? 257 : 1;
  let evaluations = 0;
  const floors = target.minPsnr !== undefined || target.minSsim !== undefined;
  const total = floors ? SEARCH_EVALS : MAX_ENCODES;
  const done = (encoded: EncodedStack): StackFit => {
    evaluations++;
    onProgress?.(Math.min(1, evaluations / total));
    return { encoded, psnr: [], ssim: [], evaluations };
  };
  /** PSNR of every frame, SSIM too when a floor needs it or `final` (the report's figures). */
  const measured = (f: StackFit, final = false): StackFit =>
    final && fitOptions.deferQuality
      ? f
      : { ...f, ...measureFrames(prep.input, f.encoded.frameOf(), final || target.minSsim !== undefined) };
  if (!floors && target.maxBytes === undefined) {
    const rank = target.rank ?? Math.min(prep.eigen[0].length, 8);
    const residuals = target.residuals ?? target.rank === undefined;
    return finish(measured(done(encodeStack(prep, { step: RANK_ONLY_STEP * scale, rank, residuals })), true));
  }
  const residuals = target.residuals ?? true;
  const options: PlanOptions = {
    residuals,
    rank: target.rank,
    calibration: { ...DEFAULT_CALIBRATION },
    fixedBytes: fixedBytesFor(prep),
  };
  if (!floors) {
    const fit = fitBytes(prep, target.maxBytes as number, options, scale, done);
    return finish(measured(fit, true));
  }
  /** Real encode at step Δ, the eigen-frame counts and residual trials planned there. */
  const evaluate = (step: number): StackFit => {
    const plan = planAt(prep.analysis(), step, options);
    return measured(done(encodePlan(prep, plan, residuals)));
  };
  const meetsFloors = (f: StackFit) =>
    (target.minPsnr === undefined || Math.min(...f.psnr) >= target.minPsnr) &&
    (target.minSsim === undefined || Math.min(...f.ssim) >= target.minSsim);
  const fitsBytes = (f: StackFit) =>
    target.maxBytes === undefined || f.encoded.bytes.length <= target.maxBytes;

  /** Signed violation of the floors (≤ 0 = met): dB (and 100·SSIM) short of them. */
  const violation = (f: StackFit): number => {
    let v = Number.NEGATIVE_INFINITY;
    if (target.minPsnr !== undefined) v = Math.max(v, target.minPsnr - Math.min(...f.psnr));
    if (target.minSsim !== undefined) v = Math.max(v, 100 * (target.minSsim - Math.min(...f.ssim)));
    return v;
  };
  const uMin = Math.log(0.02 * scale);
  const uMax = Math.log(1024 * scale);
  /**
   * Find the largest u = log Δ that meets the floors: bracket it by doubling moves, then regula falsi
   * between the feasible and infeasible probes, clamped so each probe cuts the bracket by at least 15%.
   */
  let best: StackFit | undefined;
  let a: { u: number; s: number } | undefined;
  let b: { u: number; s: number } | undefined;
  let u = Math.log(4 * scale);
  let move = Math.log(4);
  let last: StackFit | undefined;
  for (let it = 0; it < SEARCH_EVALS; it++) {
    const f = evaluate(Math.exp(u));
    last = f;
    const sv = violation(f);
    if (sv <= 0) {
      if (!a || u > a.u) a = { u, s: sv };
      if (fitsBytes(f) && (!best || f.encoded.bytes.length < best.encoded.bytes.length)) best = f;
    } else if (!b || u < b.u) b = { u, s: sv };
    let next: number;
    if (a && b) {
      if (Math.abs(a.u - b.u) < STEP_TOLERANCE) break;
      // Violations can be ±∞ (a frame decoded exactly has PSNR ∞): fall back to the midpoint then.
      const raw = (0 - a.s) / (b.s - a.s);
      const frac = Number.isFinite(raw) ? Math.min(0.85, Math.max(0.15, raw)) : 0.5;
      next = a.u + frac * (b.u - a.u);
    } else {
      next = a ? u + move : u - move;
      move *= 2;
      if ((next <= uMin && u <= uMin) || (next >= uMax && u >= uMax)) break;
      next = Math.min(uMax, Math.max(uMin, next));
    }
    u = next;
  }
  if (!best) {
    const edge = last && u <= uMin ? last : evaluate(0.02 * scale);
    if (meetsFloors(edge) && fitsBytes(edge)) best = edge;
    else throw new StackTargetError(describeMiss(target, edge, prep), edge);
  }
  return finish(best);

  function finish(f: StackFit): StackFit {
    if (!f.psnr.length) return { ...f, evaluations }; // deferred: see withFrameQuality
    const ssim = f.ssim.length ? f.ssim : measureFrames(prep.input, f.encoded.frameOf(), true).ssim;
    return withFrameQuality({ ...f, evaluations }, f.psnr, ssim);
  }
}

/** A fit with its frames' PSNR and SSIM, recorded in the file (SQAL) without changing its size. */
export function withFrameQuality(f: StackFit, psnr: number[], ssim: number[]): StackFit {
  return { ...f, encoded: recordFrameQuality(f.encoded, psnr, ssim), psnr, ssim };
}

/** One real encode of a plan: its eigen-frame counts, and residuals tried where the model expects them to pay. */
function encodePlan(prep: PreparedStack, plan: StackPlan, residuals: boolean): EncodedStack {
  return encodePlanned(prep, {
    step: plan.step,
    ranks: plan.channels.map((c) => c.rank),
    residuals,
    tryResidual: plan.channels.map((c) => c.tryResidual),
  });
}

/** Measure the model against a real encode of its plan: calibration ratios and the exact fixed bytes. */
function calibrate(
  o: PlanOptions,
  plan: StackPlan,
  e: EncodedStack,
  predictFixed: (chunks: number) => number,
) {
  let meanRaw = 0;
  let basisRaw = 0;
  let resRaw = 0;
  let resReal = 0;
  plan.channels.forEach((p, c) => {
    meanRaw += p.meanRaw;
    basisRaw += p.basisRaw;
    e.coded?.channels[c].residuals.forEach((r, j) => {
      if (r) {
        resRaw += p.residualRaw[j];
        resReal += r.code.bytes.length;
      }
    });
  });
  const s = e.split;
  if (meanRaw > 0) o.calibration.mean = s.mean / meanRaw;
  if (basisRaw > 0 && s.basis > 0) o.calibration.basis = s.basis / basisRaw;
  if (resRaw > 0) o.calibration.residual = resReal / resRaw;
  const chunks = e.chunks.length;
  const offset = s.header + s.container - predictFixed(chunks);
  o.fixedBytes = (n) => predictFixed(n) + offset;
}

/**
 * Land a byte budget: solve the model, encode, recalibrate, and aim again (see the module comment).
 * @throws StackTargetError when even the coarsest file is over the budget.
 */
function fitBytes(
  prep: PreparedStack,
  maxBytes: number,
  o: PlanOptions,
  scale: number,
  done: (e: EncodedStack) => StackFit,
): StackFit {
  const an = prep.analysis();
  const aim = maxBytes * (1 - AIM);
  const predictFixed = o.fixedBytes;
  const tries: Array<{ f: StackFit; plan: StackPlan }> = [];
  let plan = solveStep(an, aim, o, scale);
  const fits = (f: StackFit) => f.encoded.bytes.length <= maxBytes;
  const landed = (f: StackFit) => fits(f) && f.encoded.bytes.length >= maxBytes * (1 - LANDING);
  for (let i = 0; ; i++) {
    const e = encodePlan(prep, plan, o.residuals);
    const near = Math.abs(Math.log(e.bytes.length / maxBytes)) < RESELECT_RANGE;
    const f = done(near ? reselect(prep, e, maxBytes) : e);
    tries.push({ f, plan });
    if (landed(f)) break;
    calibrate(o, plan, f.encoded, predictFixed);
    const feasible = tries.some((t) => fits(t.f));
    if (i + 1 >= MAX_ENCODES && (feasible || i + 1 >= 2 * MAX_ENCODES)) break;
    const prev = tries[tries.length - 2];
    const ranks = plan.channels.map((c) => c.rank);
    const same = prev?.plan.channels.every((c, k) => c.rank === ranks[k]);
    const b1 = Math.log(f.encoded.bytes.length);
    if (i + 1 >= MAX_ENCODES) {
      // Past the usual count and still over: a larger step, by the measured size–step slope (or 10%).
      const slope = same ? slopeOf(prev.f, prev.plan, f, plan) : -1;
      const u = Math.log(plan.step) + Math.max(0.03, (b1 - Math.log(aim)) / Math.max(0.3, -slope));
      plan = planAt(an, Math.exp(u), { ...o, ranks });
    } else if (prev && same) {
      // Secant of log size over log step through the last two encodes, structure kept.
      const slope = slopeOf(prev.f, prev.plan, f, plan);
      const u = Math.log(plan.step) + (Math.log(aim) - b1) / (slope < -0.05 ? slope : -1);
      plan = planAt(an, Math.exp(u), { ...o, ranks });
    } else plan = solveStep(an, aim, o, scale, Math.log(plan.step));
  }
  const largest = (fs: StackFit[]) => {
    let best: StackFit | undefined;
    for (const f of fs)
      if (fits(f) && (!best || f.encoded.bytes.length > best.encoded.bytes.length)) best = f;
    return best;
  };
  let best = largest(tries.map((t) => t.f));
  // Not landed: every try's coded residuals chosen again for the budget (no coding), the fullest file kept.
  if (!best || !landed(best))
    best = largest(tries.map((t) => ({ ...t.f, encoded: reselect(prep, t.f.encoded, maxBytes) }))) ?? best;
  if (best) return best;
  const edge = done(
    encodePlanned(prep, { step: 2048 * scale, ranks: an.channels.map(() => 0), residuals: false }),
  );
  if (fits(edge)) return edge;
  throw new StackTargetError(
    `the budget of ${maxBytes} bytes is too small for this series: the smallest stack file is ${edge.encoded.bytes.length} bytes; raise the budget`,
    edge,
  );
}

/**
 * Land a file near the budget without coding again: drop the kept residuals that remove the least error
 * per byte while it is over, or add the coded but unkept ones that remove the most while they fit.
 */
function reselect(prep: PreparedStack, e: EncodedStack, maxBytes: number): EncodedStack {
  const coded = e.coded;
  if (!coded) return e;
  const keep = paying(coded);
  const items: Array<{ c: number; j: number; bytes: number; ratio: number }> = [];
  coded.channels.forEach((ch, c) => {
    ch.residuals.forEach((r, j) => {
      if (r) {
        const bytes = r.code.bytes.length + CHUNK_FRAMING;
        items.push({ c, j, bytes, ratio: r.gain / bytes });
      }
    });
  });
  items.sort((a, b) => b.ratio - a.ratio || a.c - b.c || a.j - b.j);
  let size = e.bytes.length;
  for (const it of items)
    if (!keep[it.c][it.j] && it.ratio > 0 && size + it.bytes <= maxBytes) {
      keep[it.c][it.j] = true;
      size += it.bytes;
    }
  for (let k = items.length - 1; ; k--) {
    const out = assemble(prep, coded, keep);
    if (out.bytes.length <= maxBytes || k < 0) return out;
    while (k >= 0 && !keep[items[k].c][items[k].j]) k--;
    if (k >= 0) keep[items[k].c][items[k].j] = false;
  }
}

/** d log(bytes) / d log(step) between two encodes. */
function slopeOf(fa: StackFit, pa: StackPlan, fb: StackFit, pb: StackPlan): number {
  const du = Math.log(pb.step) - Math.log(pa.step);
  if (Math.abs(du) < 0.005) return -1;
  return (Math.log(fb.encoded.bytes.length) - Math.log(fa.encoded.bytes.length)) / du;
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
