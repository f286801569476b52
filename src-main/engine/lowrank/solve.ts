/**
 * Turn a budget into ranks and a quantiser step: the rate–distortion search of the codec.
 *
 * For a trial step Δ every candidate component is quantised once; its gain (σ² less its quantisation
 * error) and its estimated cost in bits (a context-conditioned empirical entropy of its entries) feed the
 * greedy allocation of ./allocate. Byte budgets are then met on the real encoded size by a secant and
 * bisection search over the greedy prefix, calling back into the container writer.
 */
import { componentError, componentScale, DEAD_ZONE, quantiseVector } from '../codec/quantise';
import type { QuantPlane, QuantTile } from '../codec/quantised';
import { type Block, greedyOrder } from './allocate';
import type { PlaneFactors } from './factorise';

export interface PlaneInput {
  factors: PlaneFactors;
  /** Share of this plane's squared error in the reported (RGB or gray) squared error. */
  weight: number;
  /** This plane's step is Δ·stepScale (so every plane adds the same weighted noise per entry). */
  stepScale: number;
}

export interface Comp {
  qu: Int32Array;
  qv: Int32Array;
}

/** All candidate components of every tile of every plane, quantised at one Δ. */
export interface Candidate {
  delta: number;
  /** Flattened tiles: [plane][tile] → components. */
  comps: Comp[][][];
  order: Block[];
  /** cumCost[P], cumGain[P]: totals of the first P blocks (bits, weighted squared grey levels). */
  cumCost: Float64Array;
  cumGain: Float64Array;
  /** Weighted squared error with no component at all (means only). */
  baseD: number;
  /** Flat tile index → [plane, tile]. */
  index: Array<[number, number]>;
  /** errs[p][t][i] = σᵢ² − (exact reduction of the tile's squared error by component i after refit). */
  errs: Float64Array[][];
}

const ESC = 16;

function magClass(a: number): number {
  return a < 3 ? a : 3;
}

/** Estimated code lengths (bits) of entry magnitudes, conditioned on the previous entry's magnitude class. */
export function costTable(comps: Comp[][][]): Float64Array[] {
  const counts = Array.from({ length: 4 }, () => new Float64Array(ESC + 1).fill(0.5));
  const count = (q: Int32Array) => {
    let prev = 0;
    for (let j = 0; j < q.length; j++) {
      const a = Math.abs(q[j]);
      counts[magClass(prev)][a < ESC ? a : ESC]++;
      prev = a;
    }
  };
  for (const p of comps)
    for (const t of p)
      for (const c of t) {
        count(c.qu);
        count(c.qv);
      }
  return counts.map((row) => {
    const total = row.reduce((s, x) => s + x, 0);
    return row.map((x, a) => -Math.log2(x / total) + (a > 0 ? 1 : 0));
  });
}

export function vectorBits(q: Int32Array, table: Float64Array[]): number {
  let bits = 0;
  let prev = 0;
  for (let j = 0; j < q.length; j++) {
    const a = Math.abs(q[j]);
    bits += table[magClass(prev)][a < ESC ? a : ESC];
    if (a >= ESC) bits += 2 * Math.log2(a - ESC + 2) + 1;
    prev = a;
  }
  return bits;
}

export interface CandidateOptions {
  /** Cap on each tile's rank (rank budgets). */
  maxRank?: number;
  /**
   * false: quantise u and v independently and estimate each component's error from the SVD (O(h + w) per
   * component; used to scan steps). true (default): quantise-and-refit against the residual (O(h·w)).
   */
  refit?: boolean;
}

/**
 * One tile's candidate components at step `step`, with the exact error each leaves after refit. A function of
 * its own so its loops are optimised as a whole after a few calls, instead of on-stack replaced inside a
 * larger loop nest (which recompiled the caller several times per worker before it settled).
 */
function tileComponents(
  tf: PlaneFactors['tiles'][number],
  step: number,
  opts: CandidateOptions,
): { list: Comp[]; e: Float64Array } {
  const r = Math.min(tf.s.length, tf.U.cols, tf.V.cols, opts.maxRank ?? Number.POSITIVE_INFINITY);
  const list: Comp[] = [];
  const e: number[] = [];
  const { h, w } = tf.rect;
  // Refit bookkeeping. The residual R_i = D − Σ_{l<i} c_l·qu_l·qv_lᵀ (D = the tile) is never formed:
  // R_iᵀ·qu = Dᵀ·qu − Σ_l c_l·(qu_l·qu)·qv_l, and the error it leaves follows from that product alone,
  // so each component costs O(nnz(qu)·w + i·(h + w)) instead of two passes over the tile.
  const D = tf.data;
  const kept: Array<{ qu: Int32Array; qv: Int32Array; c: number }> = [];
  const rtq = new Float64Array(w);
  for (let i = 0; i < r; i++) {
    const sigma = tf.s[i];
    // Entries of σ·u are at most σ; below the dead zone they all round to 0 (rank caps still apply).
    if (opts.maxRank === undefined && sigma < (0.5 + DEAD_ZONE) * step) break;
    const qu = quantiseVector(column(tf.U.data, tf.U.cols, i, h), sigma, step, new Int32Array(h));
    const qv = new Int32Array(w);
    let nu2 = 0;
    for (let k = 0; k < h; k++) nu2 += qu[k] * qu[k];
    let gain = 0;
    if (opts.refit === false) {
      quantiseVector(column(tf.V.data, tf.V.cols, i, w), sigma, step, qv);
      gain =
        sigma * sigma - componentError(qu, qv, tf.U.data, tf.U.cols, i, tf.V.data, tf.V.cols, i, sigma, step);
    } else if (nu2 > 0) {
      // Quantise-and-refit: given û = Δ·q_u, the best right factor is w = Rᵀû/‖û‖² (least squares);
      // store b = w·‖w‖·‖û‖ so the decoder's ŝ = sqrt(‖û‖‖b̂‖) rebuilds û·wᵀ. Later components
      // see the residual, so they also absorb earlier quantisation errors.
      rtq.fill(0);
      for (let y = 0; y < h; y++) {
        const a = qu[y];
        if (a === 0) continue;
        const row = y * w;
        for (let x = 0; x < w; x++) rtq[x] += D[row + x] * a;
      }
      for (const k of kept) {
        let d = 0;
        for (let y = 0; y < h; y++) d += k.qu[y] * qu[y];
        if (d === 0) continue;
        const f = k.c * d;
        for (let x = 0; x < w; x++) rtq[x] -= f * k.qv[x];
      }
      // rtq = Rᵀ·qu; the least-squares right factor is rtq/(Δ·‖qu‖²).
      let nw2 = 0;
      for (let x = 0; x < w; x++) nw2 += rtq[x] * rtq[x];
      const inv = 1 / (step * nu2);
      quantiseVector(rtq, inv * Math.sqrt(nw2 * inv * inv) * step * Math.sqrt(nu2), step, qv);
      const c = componentScale(qu, qv, step);
      if (c !== 0) {
        // ‖R − c·qu·qvᵀ‖² = ‖R‖² − 2c·(Rᵀqu)·qv + c²·‖qu‖²·‖qv‖².
        let tq = 0;
        let nv2 = 0;
        for (let x = 0; x < w; x++) {
          tq += rtq[x] * qv[x];
          nv2 += qv[x] * qv[x];
        }
        gain = 2 * c * tq - c * c * nu2 * nv2;
        kept.push({ qu, qv, c });
      }
    }
    list.push({ qu, qv });
    e.push(sigma * sigma - gain);
  }
  return { list, e: Float64Array.from(e) };
}

/** Quantise every useful component at step Δ and order them greedily. */
export function buildCandidate(inputs: PlaneInput[], delta: number, opts: CandidateOptions = {}): Candidate {
  const { comps, errs, index, baseD } = collectComponents(inputs, delta, opts);
  return orderCandidate(inputs, delta, comps, errs, index, baseD);
}

/** The quantised components of every tile at step Δ (the first half of {@link buildCandidate}). */
export function collectComponents(
  inputs: PlaneInput[],
  delta: number,
  opts: CandidateOptions = {},
): Pick<Candidate, 'comps' | 'errs' | 'index' | 'baseD'> {
  const comps: Comp[][][] = [];
  const errs: Float64Array[][] = [];
  const index: Array<[number, number]> = [];
  let baseD = 0;
  for (let p = 0; p < inputs.length; p++) {
    const { factors, weight, stepScale } = inputs[p];
    const step = delta * stepScale;
    const pc: Comp[][] = [];
    const pe: Float64Array[] = [];
    for (let t = 0; t < factors.tiles.length; t++) {
      const tf = factors.tiles[t];
      baseD += weight * tf.energy;
      const { list, e } = tileComponents(tf, step, opts);
      pc.push(list);
      pe.push(e);
      index.push([p, t]);
    }
    comps.push(pc);
    errs.push(pe);
  }
  return { comps, errs, index, baseD };
}

/**
 * Cost table, per-component gains and costs, and the greedy order of components already quantised
 * (the second half of {@link buildCandidate}). Only each tile's σ (its first comps.length values) is read
 * from `inputs`, so tiles whose data and vectors were dropped after quantising still work.
 */
export function orderCandidate(
  inputs: PlaneInput[],
  delta: number,
  comps: Comp[][][],
  errs: Float64Array[][],
  index: Array<[number, number]>,
  baseD: number,
): Candidate {
  const table = costTable(comps);
  const seqs = index.map(([p, t]) => {
    const tf = inputs[p].factors.tiles[t];
    const list = comps[p][t];
    const gains = new Float64Array(list.length);
    const costs = new Float64Array(list.length);
    for (let i = 0; i < list.length; i++) {
      gains[i] = inputs[p].weight * (tf.s[i] * tf.s[i] - errs[p][t][i]);
      costs[i] = vectorBits(list[i].qu, table) + vectorBits(list[i].qv, table) + 2;
    }
    return { gains, costs };
  });
  const order = greedyOrder(seqs);
  const cumCost = new Float64Array(order.length + 1);
  const cumGain = new Float64Array(order.length + 1);
  for (let k = 0; k < order.length; k++) {
    cumCost[k + 1] = cumCost[k] + order[k].cost;
    cumGain[k + 1] = cumGain[k] + order[k].gain;
  }
  return { delta, comps, order, cumCost, cumGain, baseD, index, errs };
}

function column(data: ArrayLike<number>, cols: number, i: number, rows: number): Float64Array {
  const out = new Float64Array(rows);
  for (let j = 0; j < rows; j++) out[j] = data[j * cols + i];
  return out;
}

/** Ranks per [plane][tile] after the first P greedy blocks. */
export function prefixRanks(c: Candidate, P: number): Int32Array[] {
  const ranks = c.comps.map((pc) => new Int32Array(pc.length));
  for (let k = 0; k < P && k < c.order.length; k++) {
    const b = c.order[k];
    const [p, t] = c.index[b.tile];
    if (b.endRank > ranks[p][t]) ranks[p][t] = b.endRank;
  }
  return ranks;
}

/** Build the quantised planes for explicit ranks. */
export function quantPlanes(inputs: PlaneInput[], c: Candidate, ranks: Int32Array[]): QuantPlane[] {
  return inputs.map((inp, p) => {
    const f = inp.factors;
    const tiles: QuantTile[] = f.tiles.map((tf, t) => {
      const r = Math.min(ranks[p][t], c.comps[p][t].length);
      const list = c.comps[p][t].slice(0, r);
      return { meanQ: tf.meanQ, u: list.map((x) => x.qu), v: list.map((x) => x.qv) };
    });
    return {
      width: f.width,
      height: f.height,
      tile: f.tile,
      step: c.delta * inp.stepScale,
      meanStep: f.meanStep,
      tiles,
    };
  });
}

/** Estimated weighted squared error after the first P blocks. */
export function estimatedError(c: Candidate, P: number): number {
  return Math.max(0, c.baseD - c.cumGain[Math.min(P, c.order.length)]);
}

/** Largest P whose estimated payload (bits·ratio/8) fits in `bytes`. */
export function prefixForBytes(c: Candidate, bytes: number, ratio: number): number {
  const bits = (bytes * 8) / ratio;
  let lo = 0;
  let hi = c.order.length;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (c.cumCost[mid] <= bits) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

/** Smallest P whose estimated error is ≤ dmax (order.length if none). */
export function prefixForError(c: Candidate, dmax: number): number {
  let lo = 0;
  let hi = c.order.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (estimatedError(c, mid) <= dmax) hi = mid;
    else lo = mid + 1;
  }
  return lo;
}

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
      return { k, c, err: estimatedError(c, prefixForBytes(c, payload * sample.fraction, ratio)) };
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
    const r = refine(inputs, c, budget, overhead, ratio, measure);
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

function sampleTiles(inputs: PlaneInput[]): { inputs: PlaneInput[]; fraction: number } {
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

/** Minimise f over even indices of [0, n) by walking downhill from the middle; returns [{ k }] best first. */
function hillClimb(n: number, f: (k: number) => number): Array<{ k: number; err: number }> {
  const memo = new Map<number, number>();
  const at = (k: number) => {
    let v = memo.get(k);
    if (v === undefined) {
      v = f(k);
      memo.set(k, v);
    }
    return v;
  };
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

/** A probe within 0.4% under the budget ends the size search (one more component rarely fits). */
const CLOSE_ENOUGH = 0.996;

/** Largest greedy prefix whose real size fits, by secant steps on the size model and bisection. */
export function refine(
  inputs: PlaneInput[],
  c: Candidate,
  budget: number,
  overhead: number,
  ratio0: number,
  measure: (planes: QuantPlane[]) => number,
): { P: number; bytes: number } {
  const N = c.order.length;
  const size = (P: number) => measure(quantPlanes(inputs, c, prefixRanks(c, P)));
  let lo = 0;
  let loBytes = overhead;
  let hi = N + 1;
  let ratio = ratio0;
  let guess = prefixForBytes(c, budget - overhead, ratio);
  for (let iter = 0; iter < 14 && hi - lo > 1; iter++) {
    if (!(guess > lo && guess < hi)) guess = (lo + hi) >> 1;
    const s = size(guess);
    if (s <= budget) {
      lo = guess;
      loBytes = s;
      if (s >= budget * CLOSE_ENOUGH) break;
    } else hi = guess;
    if (c.cumCost[guess] > 0 && s > overhead) ratio = ((s - overhead) * 8) / c.cumCost[guess];
    // Aim a little under the budget so the next probe is likely to fit.
    guess = prefixForBytes(c, (budget - overhead) * (s <= budget ? 1 : 0.995), ratio);
    if (guess >= hi) guess = hi - 1;
    if (guess <= lo) guess = lo + 1;
  }
  return { P: lo, bytes: loBytes };
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

/** Smallest estimated size whose estimated error is ≤ dmax, over the step grid. */
export function solveError(inputs: PlaneInput[], dmax: number, maxValue: number, around?: number): Plan {
  const grid = stepGrid(maxValue);
  let best: { c: Candidate; P: number; cost: number; k: number } | undefined;
  /** Estimated bits to reach dmax at step k (Infinity when even every component does not reach it). */
  const tryK = (k: number): number => {
    if (k < 0 || k >= grid.length) return Number.POSITIVE_INFINITY;
    const c = buildCandidate(inputs, grid[k]);
    const P = prefixForError(c, dmax);
    if (estimatedError(c, P) > dmax) return Number.POSITIVE_INFINITY;
    if (!best || c.cumCost[P] < best.cost) best = { c, P, cost: c.cumCost[P], k };
    return c.cumCost[P];
  };
  if (around === undefined) {
    // Climb by octaves on the estimated cost; scan every octave when the climb finds nothing feasible.
    const climb = hillClimb(grid.length, tryK);
    if (!Number.isFinite(climb[0]?.err ?? Number.POSITIVE_INFINITY))
      for (let k = 0; k < grid.length; k += 2) tryK(k);
  } else for (const k of [around - 2, around, around + 2]) tryK(k);
  const found = best as { k: number } | undefined;
  if (found) {
    const k0 = found.k;
    tryK(k0 - 1);
    tryK(k0 + 1);
  }
  if (!best) {
    const c = buildCandidate(inputs, grid[0]);
    best = { c, P: c.order.length, cost: c.cumCost[c.order.length], k: 0 };
  }
  const b = best as { c: Candidate; P: number; k: number };
  return {
    planes: quantPlanes(inputs, b.c, prefixRanks(b.c, b.P)),
    delta: b.c.delta,
    bytes: 0,
    estimatedError: estimatedError(b.c, b.P),
    stepIndex: b.k,
  };
}
