/**
 * The quality floor (--min-psnr): the smallest file whose decoded PSNR reaches the floor, solved on a model
 * and confirmed on real files, instead of quantise-and-refitting every component at every trial step.
 *
 * 1. Model: for each trial step Δ, every component is quantised without refit and its error taken from the
 *    SVD (O(h + w) per component; codec/quantise `componentError`): the error of a prefix is the discarded
 *    singular-value energy plus the quantisation error of the kept components (for a uniform quantiser
 *    about Δ²/12 per coded entry at high rate, Gersho & Gray 1992 §5.6 / Jayant & Noll 1984 §4.3, from
 *    memory; here computed exactly per component). Bits come from the coder's model (./cost-model). The
 *    step with the fewest estimated bits at the floor wins.
 * 2. Refit once: at that step only, the components the model keeps (its ranks at a little below the
 *    allowed error, plus one per tile) are quantised with refit (./candidate), whose factor-domain error
 *    is exact; the prefix that meets the floor is taken from it.
 * 3. Confirm: the file is written and decoded; its measured error decides. When it misses the floor (or is
 *    far under it) the allowed error is rescaled by the measured ratio and the prefix re-chosen on the same
 *    refit candidate (grown only if it runs out), at most {@link MAX_CHECKS} times. Only a file that met the
 *    floor when decoded is returned.
 */
import type { QuantPlane } from '../codec/quantised';
import {
  buildCandidate,
  type Candidate,
  estimatedError,
  type PlaneInput,
  prefixForError,
  prefixRanks,
  quantPlanes,
} from './candidate';
import type { DecodedRkf } from './decode-image';
import { hillClimb, memoised, type Plan, sampleTiles, stepGrid } from './solve';

/** Most real encodes + decodes of the search (the first usually meets the floor within 2 %). */
const MAX_CHECKS = 4;
/** A confirmed file within 2 % of the allowed error is small enough: one component more or less is ~that. */
const CLOSE_ENOUGH = 1.02;
/**
 * The refit keeps the model's ranks at this share of the allowed error (the no-refit model overstates the
 * error, and a missed floor re-chooses at a smaller error on the same components), plus one per tile.
 */
const CAP_ERROR_SHARE = 0.8;
/** Times the refit candidate may grow when its components run out before the floor. */
const MAX_GROWTHS = 3;

export interface FloorCheck {
  file: Uint8Array;
  decoded: DecodedRkf;
  /** Squared error of the decoded file against the source (the reported colour planes, grey levels²). */
  sse: number;
  /** Whether the decoded file meets the floor. */
  ok: boolean;
}

export interface FloorPlan extends Plan {
  /** The confirmed file (its `planes` written) and its decode, so the caller need not redo either. */
  file: Uint8Array;
  decoded: DecodedRkf;
  /** Real encodes + decodes the search made. */
  checks: number;
}

export type FloorStage = 'model' | 'refit' | 'check';

/**
 * The smallest confirmed file whose decoded error meets the floor. `target` is the allowed squared error
 * (decoded, grey levels²) over `samples` decoded samples; `check` writes and decodes a file. Returns undefined when the model finds no
 * step that reaches the floor with the factors at hand (the caller falls back to full rank).
 */
export function solveFloor(
  inputs: PlaneInput[],
  target: number,
  maxValue: number,
  samples: number,
  check: (planes: QuantPlane[]) => FloorCheck,
  onProgress: (stage: FloorStage, fraction: number) => void = () => {},
): FloorPlan | undefined {
  const grid = stepGrid(maxValue);
  onProgress('model', 0);
  // The decoder rounds each sample to an integer: about 1/12 of a sample step² of further error each
  // (uniform rounding error, common practice; clamping to the range only removes error). Aim under it.
  const rounding = samples / 12;
  let dmax = target > 2 * rounding ? target - rounding : target;
  const k = modelStep(inputs, grid, dmax);
  if (k === undefined) return undefined;
  let caps = modelCaps(inputs, grid[k], dmax * CAP_ERROR_SHARE);
  const refit = (share: number) =>
    buildCandidate(inputs, grid[k], { caps, onProgress: (f) => onProgress('refit', f * share) });
  let c = refit(1);
  let found: FloorPlan | undefined;
  let checks = 0;
  let growths = 0;
  let lastP = -1;
  while (checks < MAX_CHECKS) {
    let P = prefixForError(c, dmax);
    while (estimatedError(c, P) > dmax && growths < MAX_GROWTHS) {
      // The refit ran out of components before the floor: allow twice the ranks, plus two per tile.
      growths++;
      caps = caps.map((pc) => pc.map((r) => 2 * r + 2));
      c = refit(1);
      P = prefixForError(c, dmax);
    }
    if (P === lastP) {
      // The rescaled error asks for the same prefix: one block more when it missed, else stop.
      if (found || P >= c.order.length) break;
      P++;
    }
    lastP = P;
    onProgress('check', checks / MAX_CHECKS);
    const planes = quantPlanes(inputs, c, prefixRanks(c, P));
    const r = check(planes);
    checks++;
    const ratio = r.sse > 0 ? target / r.sse : 2;
    if (r.ok && (!found || r.file.length < found.file.length))
      found = {
        planes,
        delta: c.delta,
        stepIndex: k,
        bytes: r.file.length,
        estimatedError: estimatedError(c, P),
        file: r.file,
        decoded: r.decoded,
        checks,
      };
    if (r.ok && ratio < CLOSE_ENOUGH) break;
    // Aim the next prefix by the measured ratio (clamping and rounding make the decoded error differ from
    // the factor-domain figure), just under the floor.
    dmax *= Math.min(4, Math.max(0.25, ratio)) * (r.ok ? 0.998 : 0.99);
  }
  if (found) found.checks = checks;
  return found;
}

/** The grid step with the fewest estimated bits at error ≤ dmax on the no-refit model, or undefined. */
function modelStep(inputs: PlaneInput[], grid: number[], dmax: number): number | undefined {
  // Steps are compared on solveBytes' deterministic sample of at most 256 tiles, with the allowed error
  // scaled by the sampled share of pixels: the comparison, not the absolute figure, matters here.
  const sample = sampleTiles(inputs);
  const bits = (k: number): number => {
    if (k < 0 || k >= grid.length) return Number.POSITIVE_INFINITY;
    const c = buildCandidate(sample.inputs, grid[k], { refit: false });
    const P = prefixForError(c, dmax * sample.fraction);
    return estimatedError(c, P) > dmax * sample.fraction ? Number.POSITIVE_INFINITY : c.cumCost[P];
  };
  const memo = new Map<number, number>();
  const at = memoised(bits, memo);
  // Climb by octaves; when nothing on the climb reaches the floor, scan every octave.
  let best = hillClimb(grid.length, at)[0];
  if (!Number.isFinite(best?.err ?? Number.POSITIVE_INFINITY)) for (let k = 0; k < grid.length; k += 2) at(k);
  best = [...memo.entries()].map(([kk, err]) => ({ k: kk, err })).sort((a, b) => a.err - b.err)[0];
  if (!best || !Number.isFinite(best.err)) return undefined;
  // Half an octave either side.
  at(best.k - 1);
  at(best.k + 1);
  let k = best.k;
  for (const [kk, v] of memo) if (v < at(k)) k = kk;
  return k;
}

/** Per-tile component caps for the refit: the no-refit model's ranks at error ≤ dmax, plus one. */
function modelCaps(inputs: PlaneInput[], step: number, dmax: number): Int32Array[] {
  const c: Candidate = buildCandidate(inputs, step, { refit: false });
  const ranks = prefixRanks(c, prefixForError(c, dmax));
  return ranks.map((pr) => pr.map((r) => r + 1));
}

/**
 * Weighted squared error of keeping every component the factors hold, unquantised: the energy they leave
 * out (Eckart–Young). No file from these factors decodes much below it.
 */
export function truncationError(inputs: PlaneInput[]): number {
  let e = 0;
  for (const inp of inputs)
    for (const tf of inp.factors.tiles) {
      let kept = 0;
      for (let i = 0; i < tf.s.length; i++) kept += tf.s[i] * tf.s[i];
      e += inp.weight * Math.max(0, tf.energy - kept);
    }
  return e;
}
