/**
 * The candidates of the rate–distortion search: every useful component of every tile of every plane,
 * quantised at one step Δ (with quantise-and-refit), its gain and estimated cost, and their greedy order
 * (./allocate). A plan is a prefix of that order; the prefix helpers here turn it into ranks and planes and
 * find the prefix that fits a size or an error. The searches over Δ are in ./solve.
 */
import { componentError, componentScale, DEAD_ZONE, quantiseVector } from '../codec/quantise';
import type { QuantPlane, QuantTile } from '../codec/quantised';
import { type Block, greedyOrder } from './allocate';
import { codeLengths, countVector, newCounts, vectorBits } from './cost-model';
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

/** Estimated code lengths (bits) of entry magnitudes, conditioned on the previous entry's magnitude class. */
export function costTable(comps: Comp[][][]): Float64Array[] {
  const counts = newCounts();
  for (const p of comps)
    for (const t of p)
      for (const c of t) {
        countVector(counts, c.qu, 0, c.qu.length);
        countVector(counts, c.qv, 0, c.qv.length);
      }
  return codeLengths(counts);
}

export interface CandidateOptions {
  /** Cap on each tile's rank (rank budgets). */
  maxRank?: number;
  /**
   * false: quantise u and v independently and estimate each component's error from the SVD (O(h + w) per
   * component; used to scan steps). true (default): quantise-and-refit against the residual (O(h·w)).
   */
  refit?: boolean;
  /**
   * Most components each tile may keep, [plane][tile] (the dead zone still ends a tile's list earlier). The
   * quality-floor search caps the refit at the ranks its model asks for (./floor-solve).
   */
  caps?: ArrayLike<number>[];
  /** Called after each component with the share of the components (capped tiles) quantised so far. */
  onProgress?: (fraction: number) => void;
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
  cap: number,
  tick: () => void,
): { list: Comp[]; e: Float64Array } {
  const r = Math.min(tf.s.length, tf.U.cols, tf.V.cols, opts.maxRank ?? Number.POSITIVE_INFINITY, cap);
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
    tick();
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
  const tick = progressTicker(inputs, opts);
  for (let p = 0; p < inputs.length; p++) {
    const { factors, weight, stepScale } = inputs[p];
    const step = delta * stepScale;
    const pc: Comp[][] = [];
    const pe: Float64Array[] = [];
    for (let t = 0; t < factors.tiles.length; t++) {
      const tf = factors.tiles[t];
      baseD += weight * tf.energy;
      const { list, e } = tileComponents(tf, step, opts, opts.caps?.[p][t] ?? Number.POSITIVE_INFINITY, tick);
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
 * The per-component progress callback of {@link collectComponents}: the share of all (capped) components
 * quantised so far, or a no-op without `opts.onProgress`.
 */
function progressTicker(inputs: PlaneInput[], opts: CandidateOptions): () => void {
  const report = opts.onProgress;
  if (!report) return () => {};
  let total = 0;
  for (let p = 0; p < inputs.length; p++)
    for (let t = 0; t < inputs[p].factors.tiles.length; t++)
      total += Math.min(inputs[p].factors.tiles[t].s.length, opts.caps?.[p][t] ?? Number.POSITIVE_INFINITY);
  let done = 0;
  return () => {
    done++;
    report(Math.min(1, done / Math.max(1, total)));
  };
}

/**
 * Cost table, per-component gains and costs, and the greedy order of components already quantised
 * (the second half of {@link buildCandidate}). Only each tile's σ (its first comps.length values) is read
 * from `inputs`, so tiles whose data and vectors were dropped after quantising still work.
 */
function orderCandidate(
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
  return { delta, comps, order, ...prefixTotals(order), baseD, index, errs };
}

/** cumCost[P] and cumGain[P]: the totals of the first P blocks of a greedy order. */
function prefixTotals(order: Block[]): { cumCost: Float64Array; cumGain: Float64Array } {
  const cumCost = new Float64Array(order.length + 1);
  const cumGain = new Float64Array(order.length + 1);
  for (let k = 0; k < order.length; k++) {
    cumCost[k + 1] = cumCost[k] + order[k].cost;
    cumGain[k + 1] = cumGain[k] + order[k].gain;
  }
  return { cumCost, cumGain };
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

/** Largest P whose estimated payload (cumCost[P] bits·ratio/8) fits in `bytes`. */
export function prefixForBytes(cumCost: Float64Array, bytes: number, ratio: number): number {
  const bits = (bytes * 8) / ratio;
  let lo = 0;
  let hi = cumCost.length - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (cumCost[mid] <= bits) lo = mid;
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

/** A probe within 0.4% under the budget ends the size search (one more component rarely fits). */
const CLOSE_ENOUGH = 0.996;

/**
 * Largest greedy prefix whose real size fits, by secant steps on the size model and bisection. `cumCost`
 * is the prefix costs (bits) of a greedy order and `size(P)` the real file size at prefix P.
 */
export function fitPrefix(
  cumCost: Float64Array,
  budget: number,
  overhead: number,
  ratio0: number,
  size: (P: number) => number,
): { P: number; bytes: number } {
  const N = cumCost.length - 1;
  let lo = 0;
  let loBytes = overhead;
  let hi = N + 1;
  let ratio = ratio0;
  let guess = prefixForBytes(cumCost, budget - overhead, ratio);
  for (let iter = 0; iter < 14 && hi - lo > 1; iter++) {
    if (!(guess > lo && guess < hi)) guess = (lo + hi) >> 1;
    const s = size(guess);
    if (s <= budget) {
      lo = guess;
      loBytes = s;
      if (s >= budget * CLOSE_ENOUGH) break;
    } else hi = guess;
    if (cumCost[guess] > 0 && s > overhead) ratio = ((s - overhead) * 8) / cumCost[guess];
    // Aim a little under the budget so the next probe is likely to fit.
    guess = prefixForBytes(cumCost, (budget - overhead) * (s <= budget ? 1 : 0.995), ratio);
    if (guess >= hi) guess = hi - 1;
    if (guess <= lo) guess = lo + 1;
  }
  return { P: lo, bytes: loBytes };
}
