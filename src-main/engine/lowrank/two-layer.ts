/**
 * The two-layer split of a byte budget: a low-rank base (the tile-SVD factors of ./solve) plus a residual
 * layer (the source minus the decoded base, coded by the wavelet plane coder of ../codec/wavelet-plane).
 *
 * The rule is equal slope: bytes go where they remove the most squared error per byte, the condition for an
 * optimal split of bits between independent coders (Everett, Oper. Res. 11(3):399–417, 1963, Theorem 1;
 * Shoham & Gersho, IEEE Trans. ASSP 36(9):1445–1453, 1988, eq. 7). This first version applies it to a small
 * candidate set, not by a continuous solve:
 *
 * 1. base only (the plan {@link solveBytes} found for the whole budget, no residual);
 * 2. residual only (rank 0: an empty whole-plane base; the wavelet coder gets every byte);
 * 3. mixed: the base keeps the greedy components whose estimated slope (squared error removed per bit) is at
 *    least κ·λ, for κ ∈ {1, 3}, where λ is the residual coder's own measured slope at the budget
 *    (from candidate 2's last two real encodes). κ > 1 because a component also removes error the wavelet
 *    would have removed anyway, so its gain on top of the residual is less than its gain alone;
 * 4. the whole base plan (κ = 0) plus a residual in the bytes left by the two-layer file's smaller framing
 *    (container 1.3: compact header, packed ICC profile), typically 300–1000 bytes.
 *
 * For each candidate with a residual, the residual's step Δ (one step for all planes, scaled per plane so every
 * plane adds the same weighted error per coefficient, as the base does) is chosen to fill the bytes the base
 * leaves: a histogram rate model (estimateBits) calibrated by real encodes, at most {@link MAX_RESIDUAL_CODES}
 * real encodes per candidate (the search between them uses the transform-domain error estimate
 * codedSquaredError). Candidates are compared by their exact weighted squared error in float before rounding
 * (base plus the residual as the decoder rebuilds it); the least wins. Base only is always a candidate, so
 * the file is never worse than base only except by the rounding to integer samples.
 */

import { reconstructRows } from '../codec/quantise';
import { type QuantPlane, tileGrid } from '../codec/quantised';
import { analysePlane, reconstructCoded } from '../codec/wavelet-plane';
import { type Fitted, fitResidual, type ResidualBytes, residualTarget, slopeOf } from './residual-fit';
import { buildCandidate, type Plan, type PlaneInput, prefixRanks, quantPlanes } from './solve';

/** Slope multipliers κ of the mixed candidates. */
const MIXED_KAPPAS = [1, 3] as const;

type LayerChoice = 'base-only' | 'residual-only' | 'mixed';

export interface LayerCandidate {
  kind: LayerChoice;
  /** Slope multiplier of a mixed candidate. */
  kappa?: number;
  /** Total kept components over every tile and plane of the base. */
  baseComponents: number;
  /** Bytes of the base layer (PLNE payloads) and of the residual layer (RSDL payloads). */
  baseBytes: number;
  residualBytes: number;
  /** Residual step Δ of the first coded plane (others scale it), or undefined without a residual. */
  residualStep?: number;
  /** Size of the complete file. */
  fileBytes: number;
  /** Weighted squared error in float before rounding (residual part estimated in the transform domain). */
  sse: number;
}

export interface LayerPlan {
  basePlanes: QuantPlane[];
  /** Per coded plane: step and coded bytes of the residual, or undefined for none. */
  residual?: { steps: number[]; bytes: Uint8Array[] };
  /** The decoded base per coded plane (float64), for the report's base-layer error. */
  base: Float64Array[];
  chosen: LayerCandidate;
  candidates: LayerCandidate[];
  /** Real encodes of the residual layer (each codes every plane once). */
  residualEncodes: number;
  /** λ, the residual coder's measured slope at the budget (weighted squared error per bit), if measured. */
  lambda?: number;
}

export interface LayerContext {
  /** The coded planes (gray, or Y, Cb, Cr) as the base was factored from. */
  planes: ArrayLike<number>[];
  width: number;
  height: number;
  weights: number[];
  inputs: PlaneInput[];
  /** The base-only plan for the whole budget. */
  basePlan: Plan;
  budget: number;
  /** The complete file for a base and an optional residual. */
  build: (base: QuantPlane[], residual?: ResidualBytes) => Uint8Array;
  /** Bytes of the PLNE payloads of a file built from `base`. */
  baseBytes: (base: QuantPlane[]) => number;
  cancel: () => void;
}

/** An empty whole-plane base (rank 0, no tile means): it decodes to 0 everywhere. */
export function emptyBase(width: number, height: number): QuantPlane {
  return { width, height, tile: 0, step: 1, meanStep: 0, tiles: [{ meanQ: 0, u: [], v: [] }] };
}

function reconstruct(p: QuantPlane): Float64Array {
  const out = new Float64Array(p.width * p.height);
  reconstructRows(p, tileGrid(p.width, p.height, p.tile), 0, p.height, out);
  return out;
}

function components(planes: QuantPlane[]): number {
  let n = 0;
  for (const p of planes) for (const t of p.tiles) n += t.u.length;
  return n;
}

/**
 * Choose among base only, residual only and mixed bases by squared error at the byte budget (see the module
 * comment). Returns undefined when no candidate with a residual fits (then the caller keeps base only).
 */
export function chooseLayers(ctx: LayerContext): LayerPlan {
  const { planes, width, height, weights, inputs, basePlan, budget } = ctx;
  const nc = planes.length;
  const scales = inputs.map((inp) => inp.stepScale);
  const sseOf = (base: Float64Array[]) => {
    let s = 0;
    for (let k = 0; k < nc; k++) {
      const o = planes[k];
      const b = base[k];
      let e = 0;
      for (let i = 0; i < b.length; i++) {
        const d = o[i] - b[i];
        e += d * d;
      }
      s += weights[k] * e;
    }
    return s;
  };
  type Heavy = LayerCandidate & { planes: QuantPlane[]; base?: Float64Array[]; fit?: Fitted };
  const candidates: Heavy[] = [];
  // Only the best candidate so far keeps its decoded base and coded residual (memory: a few float planes).
  let chosen: Heavy | undefined;
  const offer = (c: Heavy) => {
    candidates.push(c);
    if (c.fileBytes <= budget && (!chosen || chosen.fileBytes > budget || c.sse < chosen.sse)) {
      if (chosen) {
        chosen.base = undefined;
        if (chosen.fit) chosen.fit = { ...chosen.fit, coded: [] };
      }
      chosen = c;
    } else {
      c.base = undefined;
      if (c.fit) c.fit = { ...c.fit, coded: [] };
    }
    if (!chosen) chosen = c;
  };
  // 1. Base only.
  {
    const base = basePlan.planes.map(reconstruct);
    const fileBytes = ctx.build(basePlan.planes).length;
    offer({
      kind: 'base-only',
      baseComponents: components(basePlan.planes),
      baseBytes: ctx.baseBytes(basePlan.planes),
      residualBytes: 0,
      fileBytes,
      sse: sseOf(base),
      planes: basePlan.planes,
      base,
    });
  }
  let ratio = 0.8;
  let encodes = 0;
  const withResidual = (
    kind: LayerChoice,
    basePlanes: QuantPlane[],
    kappa?: number,
  ): Fitted['points'] | undefined => {
    ctx.cancel();
    const base = basePlanes.map(reconstruct);
    const residual = planes.map((o, k) => {
      const r = new Float64Array(width * height);
      const b = base[k];
      for (let i = 0; i < r.length; i++) r[i] = o[i] - b[i];
      return r;
    });
    // What the base, header and framing leave for the residual payloads.
    const target = residualTarget(ctx.build, basePlanes, budget);
    if (target < 8 * nc) return undefined;
    const analysed = residual.map((r) => analysePlane(r, width, height));
    const { fit, ratio: r } = fitResidual(analysed, weights, scales, target, ratio, ctx.cancel);
    ratio = r;
    if (!fit) return undefined;
    encodes += fit.codes;
    const file = ctx.build(basePlanes, { steps: fit.steps, bytes: fit.bytes }).length;
    if (file > budget) return undefined;
    // The candidate's error exactly (float, before rounding): the residual as the decoder rebuilds it.
    let sse = 0;
    for (let k = 0; k < nc; k++) {
      const rec = reconstructCoded(analysed[k], fit.coded[k]);
      const res = residual[k];
      let e = 0;
      for (let i = 0; i < rec.length; i++) {
        const d = res[i] - rec[i];
        e += d * d;
      }
      sse += weights[k] * e;
    }
    offer({
      kind,
      kappa,
      baseComponents: components(basePlanes),
      baseBytes: ctx.baseBytes(basePlanes),
      residualBytes: fit.bytes.reduce((s, b) => s + b.length, 0),
      residualStep: fit.steps[0],
      fileBytes: file,
      sse,
      planes: basePlanes,
      base,
      fit,
    });
    return fit.points;
  };
  // 2. Residual only (rank 0).
  const points = withResidual(
    'residual-only',
    planes.map(() => emptyBase(width, height)),
  );
  // 3. Mixed: the components at least κ·λ steep, from the base plan's step.
  const lambda = points ? slopeOf(points) : undefined;
  if (lambda !== undefined && lambda > 0 && Number.isFinite(basePlan.estimatedError)) {
    // The base plan's own candidate (its greedy order at its step), or the same rebuilt.
    const c = basePlan.candidate ?? buildCandidate(inputs, basePlan.delta);
    let lastP = -1;
    for (const kappa of MIXED_KAPPAS) {
      let P = 0;
      while (P < c.order.length && c.order[P].gain >= kappa * lambda * c.order[P].cost) P++;
      if (P === 0 || P === lastP) continue;
      lastP = P;
      withResidual('mixed', quantPlanes(inputs, c, prefixRanks(c, P)), kappa);
    }
  }
  // 4. The whole base plan with a residual in the bytes a two-layer file's smaller framing leaves (its compact
  // header and packed ICC profile, container 1.3; κ = 0): no worse than base only when those bytes fit one.
  if (components(basePlan.planes) > 0) withResidual('mixed', basePlan.planes, 0);
  // Base only can be over the budget only when the budget is below the smallest base-only file (the caller
  // then offers an empty base); it is then never chosen over a candidate that fits (see offer).
  const best = chosen as Heavy;
  const strip = ({ planes: _p, base: _b, fit: _f, ...rest }: Heavy): LayerCandidate => rest;
  return {
    basePlanes: best.planes,
    residual: best.fit ? { steps: best.fit.steps, bytes: best.fit.bytes } : undefined,
    base: best.base ?? best.planes.map(reconstruct),
    chosen: strip(best),
    candidates: candidates.map(strip),
    residualEncodes: encodes,
    lambda,
  };
}
