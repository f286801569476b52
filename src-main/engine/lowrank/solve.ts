/**
 * Turn a budget into ranks and a quantiser step: the rate–distortion search of the codec.
 *
 * For a trial step Δ every candidate component is quantised once (./candidate); its gain (σ² less its
 * quantisation error) and its estimated cost in bits (./cost-model) feed the greedy allocation of ./allocate.
 * Byte budgets are then met on the real encoded size by a secant and bisection search over the greedy
 * prefix, calling back into the container writer.
 */
import type { QuantPlane } from '../codec/quantised';
import {
  buildCandidate,
  type Candidate,
  estimatedError,
  fitPrefix,
  type PlaneInput,
  prefixForBytes,
  prefixRanks,
  quantPlanes,
} from './candidate';
import type { DecodedRkf } from './decode-image';

// The candidate API ./two-layer takes from here.
export { buildCandidate, type PlaneInput, prefixRanks, quantPlanes };

/** Steps tried: base·2^(k/2), base = one grey level of the plane scale. */
export function stepGrid(maxValue: number): number[] {
  const base = maxValue / 255;
  const out: number[] = [];
  for (let k = -6; k <= 16; k++) out.push(base * 2 ** (k / 2));
  return out;
}

export interface Plan {
  planes: QuantPlane[];
  delta: number;
  /** Index of Δ in stepGrid (quality-floor search). */
  stepIndex?: number;
  /** Real size reported by the measure callback (bytes), when measured. */
  bytes: number;
  estimatedError: number;
  /** The quantised candidate the plan is a greedy prefix of (set by solveBytes; reused by ./two-layer). */
  candidate?: Candidate;
  /** The file of exactly these planes and its decode, when the search already wrote and decoded it. */
  file?: Uint8Array;
  decoded?: DecodedRkf;
}

/**
 * Meet a byte budget on the real encoded size. `measure` returns the size of the complete file for
 * the given planes. Returns the plan of least estimated error among the steps tried that fits.
 * @throws RangeError when even rank 0 everywhere does not fit (the caller reports the minimum size).
 */
export function solveBytes(
  inputs: PlaneInput[],
  budget: number,
  maxValue: number,
  measure: (planes: QuantPlane[]) => number,
): Plan {
  const grid = stepGrid(maxValue);
  // Overhead: header, means, alpha and the rank codes of an all-zero-rank file.
  const empty = buildCandidate(inputs, grid[grid.length - 1], { refit: false });
  const overhead = measure(quantPlanes(inputs, empty, prefixRanks(empty, 0)));
  if (overhead > budget) throw new RangeError(`minimum size ${overhead}`);
  const payload = budget - overhead;
  // Pass 1: coarse scan of steps on the estimate alone.
  // Steps are compared on a deterministic sample of at most SCAN_TILES tiles (every s-th tile of each
  // plane), with the payload scaled by the sampled share of pixels: the comparison, not the absolute
  // figure, matters here, and the final plan is refined on every tile with real encodes.
  const sample = sampleTiles(inputs);
  const scan = (ks: number[], ratio: number) =>
    ks.map((k) => {
      const c = buildCandidate(sample.inputs, grid[k], { refit: false });
      return { k, c, err: estimatedError(c, prefixForBytes(c.cumCost, payload * sample.fraction, ratio)) };
    });
  // The estimated error at the budget is unimodal in the step in practice (too fine: few components
  // fit; too coarse: each is crude), so climb from the middle of the grid by whole octaves.
  const coarse = hillClimb(grid.length, (k) => scan([k], 1)[0].err);
  let best: Plan | undefined;
  let ratio = 1;
  const tried = new Set<number>();
  const refineAt = (k: number) => {
    if (k < 0 || k >= grid.length || tried.has(k)) return;
    tried.add(k);
    const c = buildCandidate(inputs, grid[k]);
    const r = fitPrefix(c.cumCost, budget, overhead, ratio, (P) =>
      measure(quantPlanes(inputs, c, prefixRanks(c, P))),
    );
    if (r.bytes <= budget) {
      if (c.cumCost[r.P] > 0 && r.bytes > overhead)
        ratio = Math.max(0.2, Math.min(5, ((r.bytes - overhead) * 8) / c.cumCost[r.P]));
      const err = estimatedError(c, r.P);
      if (!best || err < best.estimatedError)
        best = {
          planes: quantPlanes(inputs, c, prefixRanks(c, r.P)),
          delta: c.delta,
          bytes: r.bytes,
          estimatedError: err,
          candidate: c,
        };
    }
  };
  const k0 = coarse[0].k;
  refineAt(k0);
  // Pass 2: with the measured ratio, the best neighbour of the best coarse step (half an octave away).
  const fine = scan(
    [k0 - 1, k0 + 1].filter((k) => k >= 0 && k < grid.length),
    ratio,
  ).sort((a, b) => a.err - b.err);
  if (fine.length) refineAt(fine[0].k);
  if (!best) {
    const c = empty;
    best = {
      planes: quantPlanes(inputs, c, prefixRanks(c, 0)),
      delta: c.delta,
      bytes: overhead,
      estimatedError: c.baseD,
    };
  }
  return best;
}

/** Most tiles the step scan looks at. */
const SCAN_TILES = 256;

export function sampleTiles(inputs: PlaneInput[]): { inputs: PlaneInput[]; fraction: number } {
  const total = inputs.reduce((s, i) => s + i.factors.tiles.length, 0);
  const stride = Math.max(1, Math.floor(total / SCAN_TILES));
  if (stride === 1) return { inputs, fraction: 1 };
  let all = 0;
  let kept = 0;
  const sampled = inputs.map((inp) => {
    const tiles = inp.factors.tiles.filter((_, t) => t % stride === Math.floor(stride / 2));
    for (const t of inp.factors.tiles) all += t.rect.w * t.rect.h;
    for (const t of tiles) kept += t.rect.w * t.rect.h;
    return { ...inp, factors: { ...inp.factors, tiles } };
  });
  return { inputs: sampled, fraction: kept / all };
}

/** f with each value computed once; `memo` holds every argument tried and its value. */
export function memoised(f: (k: number) => number, memo = new Map<number, number>()): (k: number) => number {
  return (k) => {
    let v = memo.get(k);
    if (v === undefined) {
      v = f(k);
      memo.set(k, v);
    }
    return v;
  };
}

/** Minimise f over even indices of [0, n) by walking downhill from the middle; returns [{ k }] best first. */
export function hillClimb(n: number, f: (k: number) => number): Array<{ k: number; err: number }> {
  const memo = new Map<number, number>();
  const at = memoised(f, memo);
  let k = Math.floor(n / 4) * 2;
  for (;;) {
    const here = at(k);
    const up = k + 2 < n ? at(k + 2) : Number.POSITIVE_INFINITY;
    const down = k - 2 >= 0 ? at(k - 2) : Number.POSITIVE_INFINITY;
    if (up < here && up <= down) k += 2;
    else if (down < here) k -= 2;
    else break;
  }
  return [...memo.entries()].map(([kk, err]) => ({ k: kk, err })).sort((a, b) => a.err - b.err);
}

/**
 * Fixed ranks (a rank budget): each tile keeps min(K, its size) components, and Δ is the largest step
 * whose estimated quantisation error stays ≤ `quantError` (weighted squared grey levels).
 */
export function solveRank(
  inputs: PlaneInput[],
  rank: number,
  maxValue: number,
  lossFraction: number,
  floorMse: number,
): Plan {
  // Truncation error at rank K.
  let trunc = 0;
  let count = 0;
  for (const inp of inputs)
    for (const tf of inp.factors.tiles) {
      let kept = 0;
      for (let i = 0; i < Math.min(rank, tf.s.length); i++) kept += tf.s[i] * tf.s[i];
      trunc += inp.weight * Math.max(0, tf.energy - kept);
      count += tf.rect.w * tf.rect.h * inp.weight;
    }
  const target = Math.max(lossFraction * trunc, floorMse * count * (maxValue / 255) ** 2);
  /** Exact squared error at rank K (the refit residual) minus the truncation error. */
  const quantErr = (c: Candidate) => {
    let e = 0;
    for (let p = 0; p < inputs.length; p++)
      for (let t = 0; t < c.comps[p].length; t++) for (const x of c.errs[p][t]) e += inputs[p].weight * x;
    return e;
  };
  // Bisection over a quarter-octave step grid.
  const base = maxValue / 255;
  let lo = -40; // fine enough: 2^-10 grey levels
  let hi = 40;
  let bestC: Candidate | undefined;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    const c = buildCandidate(inputs, base * 2 ** (mid / 4), { maxRank: rank });
    if (quantErr(c) <= target) {
      lo = mid;
      bestC = c;
    } else hi = mid;
  }
  const c = bestC ?? buildCandidate(inputs, base * 2 ** (lo / 4), { maxRank: rank });
  const ranks = inputs.map((inp) => Int32Array.from(inp.factors.tiles, (tf) => Math.min(rank, tf.s.length)));
  return {
    planes: quantPlanes(inputs, c, ranks),
    delta: c.delta,
    bytes: 0,
    estimatedError: trunc + quantErr(c),
  };
}
