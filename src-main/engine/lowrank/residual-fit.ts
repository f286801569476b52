/**
 * Fitting a wavelet-coded residual layer (../codec/wavelet-plane) to a byte target: a histogram rate model
 * (estimateBits) calibrated by real encodes, with at most {@link MAX_RESIDUAL_CODES} real encodes of every
 * plane, and the slope λ (squared error removed per bit) measured from those encodes. Used by ./two-layer for
 * each candidate base and by ./residual-first for the residual-only file.
 */
import type { QuantPlane } from '../codec/quantised';
import { discardQ } from '../codec/resident-plane';
import {
  type AnalysedPlane,
  type CodedCoefficients,
  codeAnalysed,
  codedSquaredError,
  estimateBits,
  requantised,
  smallestSafeStep,
} from '../codec/wavelet-plane';

/** A residual layer as the file writer takes it: the step and the coded bytes of each plane. */
export interface ResidualBytes {
  steps: number[];
  bytes: Uint8Array[];
}

/** Length in bytes of n as an unsigned LEB128 varint (the compact framing's chunk lengths). */
function varintLength(n: number): number {
  let k = 1;
  for (let v = n; v >= 128; v = Math.floor(v / 128)) k++;
  return k;
}

/**
 * A step that is not an integer: the compact header (../codec/compact-header) writes it as a float64, tag and
 * 8 bytes, the longest form a number takes there (an integer step below 2^48 is a shorter varint).
 */
const FLOAT_STEP = 0.5;

/**
 * The most bytes the residual payloads (summed over planes) may take so that the file built from `base` with
 * them stays within `budget`: the budget less the file with empty residual chunks and float steps, less the
 * growth of each chunk's length varint (container 1.3 compact framing, ../codec/container-compact) up to the
 * length of the whole target. Exact for one plane when the payload's varint is as long as the target's;
 * otherwise at most 1–2 bytes per plane under what would fit.
 */
export function residualTarget(
  build: (base: QuantPlane[], residual: ResidualBytes) => Uint8Array,
  base: QuantPlane[],
  budget: number,
): number {
  const nc = base.length;
  const frame = build(base, {
    steps: base.map(() => FLOAT_STEP),
    bytes: base.map(() => new Uint8Array(0)),
  }).length;
  const room = budget - frame;
  return room - nc * (varintLength(Math.max(0, room)) - 1);
}

/** Most real encodes of the residual (all planes) per candidate. */
const MAX_RESIDUAL_CODES = 3;

/** Round a step to 6 significant digits, so the header holds exactly the value the coder used. */
export const tidy = (x: number) => Number(x.toPrecision(6));

export interface Fitted {
  steps: number[];
  bytes: Uint8Array[];
  coded: CodedCoefficients[];
  sse: number;
  codes: number;
  /** (bits, weighted squared error) of the real encodes, for the slope. */
  points: Array<{ bits: number; sse: number }>;
}

/** How closely {@link fitResidual} lands under the target: stop at ≥ `close`·target, aim retries at `aim`·target. */
export interface FitTolerance {
  close: number;
  aim: number;
  /**
   * false: measure the squared error of every real encode (for the slope λ and the choice among encodes);
   * true: only of the encode kept, which is the largest that fits (a smaller step never removes less error).
   */
  lazy: boolean;
  /**
   * When set, the second encode is aimed from the first by the rate model's size change raised to this power
   * (see {@link elasticStep}) instead of by the model recalibrated at the first encode's step alone.
   */
  elasticity?: number;
}

const EXACT: FitTolerance = { close: 0.99, aim: 0.995, lazy: false };

/** Codes every plane at its step (coder 2); ./residual-first may hand planes to a second thread. */
export type PlanesCoder = (analysed: AnalysedPlane[], steps: number[]) => CodedCoefficients[];

/** Every plane on the calling thread, in order. */
export const codeHere: PlanesCoder = (analysed, steps) =>
  analysed.map((a, k) => codeAnalysed(a, steps[k], 2));

/**
 * The residual at the smallest step whose coded size is ≤ `target` bytes (summed over planes), using the
 * calibrated rate model and at most MAX_RESIDUAL_CODES real encodes (a coarser fallback may add one more).
 */
export function fitResidual(
  analysed: AnalysedPlane[],
  weights: number[],
  scales: number[],
  target: number,
  ratio0: number,
  cancel: () => void,
  tol: FitTolerance = EXACT,
  codePlanes: PlanesCoder = codeHere,
): { fit?: Fitted; ratio: number } {
  const sseOf = (coded: CodedCoefficients[]) =>
    coded.reduce((s, c, k) => s + weights[k] * codedSquaredError(analysed[k], c), 0);
  const estimate = (d: number) => analysed.reduce((s, a, k) => s + estimateBits(a, d * scales[k]), 0) / 8;
  // Never finer than 1/16 of a sample step (far finer than rounding to integers needs) nor than the coder's
  // range allows: a flat plane's rate model would otherwise pull the search to Δ → 0 (test/hostile/flat-scans).
  const safe = analysed.reduce((m, a, k) => Math.max(m, smallestSafeStep(a) / scales[k]), 1 / 16);
  // A lazy fit reads q of the encode it keeps only, at the end: the encode before each one is discarded as it
  // is quantised over (../codec/resident-plane discardQ: not listed as non-zeros, a pass and two fresh arrays on
  // an 8-megapixel plane), and the kept one is quantised again when it is not the last ({@link keptCoded}).
  let last: CodedCoefficients[] = [];
  const dropped = new Set<CodedCoefficients>();
  const code = (step: number) => {
    cancel();
    const d = Math.max(step, safe);
    const steps = analysed.map((_, k) => tidy(d * scales[k]));
    if (tol.lazy) for (const c of last) if (discardQ(c)) dropped.add(c);
    const coded = codePlanes(analysed, steps);
    last = coded;
    const bytes = coded.map((c) => c.bytes);
    const size = bytes.reduce((s, b) => s + b.length, 0);
    const sse = tol.lazy ? Number.NaN : sseOf(coded);
    return { steps, bytes, coded, size, sse };
  };
  /** Step whose calibrated estimate is `bytes` (bisection on log Δ; the estimate falls as Δ grows). */
  const stepFor = (bytes: number, ratio: number) => {
    let lo = Math.log2(1e-3);
    let hi = Math.log2(1e6);
    for (let i = 0; i < 24; i++) {
      const mid = (lo + hi) / 2;
      if (estimate(2 ** mid) * ratio > bytes) lo = mid;
      else hi = mid;
    }
    return 2 ** hi;
  };
  let ratio = ratio0;
  let best: Fitted | undefined;
  const points: Fitted['points'] = [];
  let codes = 0;
  // With the elastic second step, the first encode aims under the target as well (its calibration comes from
  // a crop and is typically a few per cent off).
  let aim = tol.elasticity ? target * tol.aim : target;
  let lastStep = 0;
  const tried: Array<{ l: number; size: number }> = [];
  for (let i = 0; i < MAX_RESIDUAL_CODES; i++) {
    const d =
      tried.length >= 2
        ? (secant(tried, aim) ?? stepFor(aim, ratio))
        : tried.length === 1 && tol.elasticity
          ? elasticStep(estimate, tried[0], aim, tol.elasticity)
          : stepFor(aim, ratio);
    if (d === lastStep) break;
    lastStep = d;
    const r = code(d);
    codes++;
    points.push({ bits: 8 * r.size, sse: r.sse });
    tried.push({ l: Math.log2(d), size: r.size });
    const est = estimate(d);
    if (est > 0) ratio = r.size / est;
    const better = tol.lazy ? r.size > sizeOf(best) : r.sse < (best?.sse ?? Number.POSITIVE_INFINITY);
    if (r.size <= target && (!best || better))
      best = { steps: r.steps, bytes: r.bytes, coded: r.coded, sse: r.sse, codes, points };
    if (r.size <= target && r.size >= target * tol.close) break;
    // Aim a little under the budget so the next encode is likely to fit.
    aim = target * tol.aim;
  }
  if (!best) {
    // The model kept overshooting: walk the step up by quarter octaves until it fits (rare).
    let d = stepFor(target * 0.9, ratio);
    for (let i = 0; i < 24 && !best; i++, d *= 2 ** 0.25) {
      const r = code(d);
      codes++;
      points.push({ bits: 8 * r.size, sse: r.sse });
      if (r.size <= target)
        best = { steps: r.steps, bytes: r.bytes, coded: r.coded, sse: r.sse, codes, points };
    }
  }
  if (best) {
    best.codes = codes;
    if (tol.lazy) {
      best.coded = keptCoded(analysed, best, dropped);
      best.sse = sseOf(best.coded);
    }
  }
  return { fit: best, ratio };
}

/** The kept encode's planes, each one whose q was discarded made again from the coefficients (same q, same bytes). */
function keptCoded(
  analysed: AnalysedPlane[],
  best: Fitted,
  dropped: Set<CodedCoefficients>,
): CodedCoefficients[] {
  return best.coded.map((c, k) => (dropped.has(c) ? requantised(analysed[k], c, best.steps[k]) : c));
}

function sizeOf(f: Fitted | undefined): number {
  return f ? f.bytes.reduce((s, b) => s + b.length, 0) : -1;
}

/**
 * Step by secant interpolation of log size over log Δ through the two real encodes nearest `aim` (the rate
 * model's error is smooth in Δ, so after two encodes the line between them lands closer than the
 * recalibrated model; common practice in rate control). Undefined when the two sizes are equal.
 */
function secant(tried: Array<{ l: number; size: number }>, aim: number): number | undefined {
  const [p, q] = [...tried]
    .filter((t) => t.size > 0)
    .sort((a, b) => Math.abs(Math.log(a.size / aim)) - Math.abs(Math.log(b.size / aim)));
  if (!q || p.size === q.size || p.l === q.l) return undefined;
  const l = p.l + ((Math.log(aim) - Math.log(p.size)) * (q.l - p.l)) / (Math.log(q.size) - Math.log(p.size));
  return Number.isFinite(l) ? 2 ** l : undefined;
}

/**
 * Step for the second encode from one real encode (log₂ Δ₁ = l, `size` bytes): the size predicted at Δ is
 * size·(estimate(Δ)/estimate(Δ₁))^κ, bisected on log Δ. The histogram model (zeroth-order entropy) calibrated
 * by one ratio says the size changes as the model does; the context coder's size changes faster (it gains
 * most where most coefficients quantise to zero), so κ > 1. Measured on four 7.5–9-megapixel grey scans
 * (single-scan speed scan; camera, moon and page upscaled, with σ 1.5 noise) at Δ 5.5–8, near 0.25 bpp: the
 * real log-size change over the model's was 1.04–1.31.
 */
function elasticStep(
  estimate: (d: number) => number,
  at: { l: number; size: number },
  aim: number,
  kappa: number,
): number {
  const e1 = estimate(2 ** at.l);
  if (!(e1 > 0 && at.size > 0)) return 2 ** at.l;
  const want = Math.log(aim / at.size) / kappa;
  let lo = at.l - 4;
  let hi = at.l + 4;
  for (let i = 0; i < 30; i++) {
    const mid = (lo + hi) / 2;
    if (Math.log(estimate(2 ** mid) / e1) > want) lo = mid;
    else hi = mid;
  }
  return 2 ** hi;
}

/** λ from the two real encodes nearest the budget: squared error removed per extra bit. */
export function slopeOf(points: Fitted['points']): number | undefined {
  if (points.length < 2) return undefined;
  const s = [...points].sort((a, b) => a.bits - b.bits);
  let best: number | undefined;
  for (let i = 1; i < s.length; i++) {
    const db = s[i].bits - s[i - 1].bits;
    if (db > 0 && s[i - 1].sse > s[i].sse) best = (s[i - 1].sse - s[i].sse) / db;
  }
  return best;
}
