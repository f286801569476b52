/**
 * Rank allocation across tiles and channels: greedily take the component with the largest
 * distortion reduction per stored bit.
 *
 * Why greedy is optimal (at its own breakpoints). Give tile t the gains g_t1 ≥ g_t2 ≥ … (g_ti = σ_ti²
 * less its quantisation error, weighted by the channel's share of the RGB error) and equal costs c_t
 * per component (every component of a tile stores h_t + w_t entries). Then each tile's cumulative gain
 * G_t(k) is concave in its cumulative cost, and the ratios g_ti / c_t are non-increasing along the
 * tile. Taking components in order of decreasing ratio is the classical marginal-return rule for a
 * separable concave resource-allocation problem (Fox, "Discrete optimization via marginal analysis",
 * Management Science 13(3), 1966; Shoham & Gersho, IEEE TASSP 36(9), 1988, for bit allocation; both from
 * memory). By an exchange argument no allocation of total cost ≤ C_P (the cost of the first P greedy
 * picks) has larger total gain: any allocation that beats it must contain a component of ratio lower
 * than the P-th pick in place of a higher one it left out, and swapping them cannot lose gain per bit.
 *
 * Caveats, stated honestly:
 * - The guarantee holds at the greedy breakpoints C_P. For budgets between breakpoints the problem is
 *   a knapsack and integer optima can differ by less than one component's gain.
 * - With measured (entropy-coded) costs, c_ti varies along a tile, so the ratios may rise; we then pool
 *   adjacent components into blocks until the ratios are non-increasing (the upper concave hull of
 *   the tile's gain–cost curve, pool-adjacent-violators), and greedy is optimal on the hull points only.
 * - Entropy-coded sizes are not exactly additive across components (adaptive contexts), and the
 *   quantisation errors of different components are not exactly orthogonal. The budget solver
 *   therefore checks real encoded sizes.
 */

export interface GainCost {
  /** Gain of component i (non-increasing for the optimality statement). */
  gains: ArrayLike<number>;
  /** Cost of component i (> 0). */
  costs: ArrayLike<number>;
}

/** A run of consecutive components of one tile taken together. */
export interface Block {
  tile: number;
  /** Rank of the tile once this block is taken. */
  endRank: number;
  gain: number;
  cost: number;
}

/**
 * Pool adjacent violators over one tile's steps (gains[from + i], costs[from + i], i < n; costs floored at
 * 1e-9) into scratch arrays: hull block j has gain sg[j], cost sc[j] and end rank se[j]. Returns the number
 * of blocks, trailing blocks with gain ≤ 0 dropped. {@link hullBlocks}, the large-scan encoder's packed order
 * and the crop's base estimate (./base-estimate, every tile's steps in one array) use it.
 */
export function poolHull(
  gains: ArrayLike<number>,
  costs: ArrayLike<number>,
  n: number,
  sg: number[],
  sc: number[],
  se: number[],
  from = 0,
): number {
  let m = 0;
  for (let i = 0; i < n; i++) {
    let gain = gains[from + i];
    let cost = Math.max(costs[from + i], 1e-9);
    while (m > 0 && gain * sc[m - 1] >= sg[m - 1] * cost) {
      m--;
      gain = sg[m] + gain;
      cost = sc[m] + cost;
    }
    sg[m] = gain;
    sc[m] = cost;
    se[m] = i + 1;
    m++;
  }
  while (m > 0 && !(sg[m - 1] > 0)) m--;
  return m;
}

/** Upper concave hull of one tile's gain–cost steps (pool adjacent violators); blocks with gain ≤ 0 are dropped. */
export function hullBlocks(tile: number, seq: GainCost): Block[] {
  const sg: number[] = [];
  const sc: number[] = [];
  const se: number[] = [];
  const m = poolHull(seq.gains, seq.costs, seq.gains.length, sg, sc, se);
  return Array.from({ length: m }, (_, j) => ({ tile, endRank: se[j], gain: sg[j], cost: sc[j] }));
}

/** All tiles' hull blocks in greedy order: decreasing gain per cost; ties by tile then rank. */
export function greedyOrder(seqs: GainCost[]): Block[] {
  const all: Block[] = [];
  for (let t = 0; t < seqs.length; t++) all.push(...hullBlocks(t, seqs[t]));
  all.sort((a, b) => b.gain / b.cost - a.gain / a.cost || a.tile - b.tile || a.endRank - b.endRank);
  return all;
}

/**
 * {@link greedyOrder}'s sort over hull blocks held in typed arrays (block i < n: gain[i], cost[i], tile[i] and
 * endRank[i]): the block indices by gain/cost, non-increasing, then tile, then end rank, the same total order,
 * so the same order. `ratio` and `idx` (at least n long) are scratch a caller may reuse; returns idx's first n.
 */
export function greedyBlockOrder(
  gain: ArrayLike<number>,
  cost: ArrayLike<number>,
  tile: ArrayLike<number>,
  endRank: ArrayLike<number>,
  n: number,
  ratio = new Float64Array(n),
  idx = new Uint32Array(n),
): Uint32Array {
  for (let i = 0; i < n; i++) ratio[i] = gain[i] / cost[i];
  const order = idx.subarray(0, n);
  for (let i = 0; i < n; i++) order[i] = i;
  order.sort((a, b) => ratio[b] - ratio[a] || tile[a] - tile[b] || endRank[a] - endRank[b]);
  return order;
}

/** Ranks after taking the first `count` blocks of a greedy order. */
export function ranksOfPrefix(order: Block[], count: number, tiles: number): Int32Array {
  const ranks = new Int32Array(tiles);
  for (let p = 0; p < count && p < order.length; p++) {
    const b = order[p];
    if (b.endRank > ranks[b.tile]) ranks[b.tile] = b.endRank;
  }
  return ranks;
}

/**
 * Greedy allocation for a cost budget: take blocks in order while the total cost stays ≤ budget.
 * Stops at the first block that does not fit (a prefix), so the result is one of the optimal breakpoints.
 * @example allocateGreedy([{ gains: [9, 4], costs: [1, 1] }, { gains: [5], costs: [1] }], 2) // Int32Array [1, 1]
 */
export function allocateGreedy(
  seqs: GainCost[],
  budget: number,
): { ranks: Int32Array; cost: number; gain: number } {
  const order = greedyOrder(seqs);
  let cost = 0;
  let gain = 0;
  let p = 0;
  for (; p < order.length; p++) {
    if (cost + order[p].cost > budget) break;
    cost += order[p].cost;
    gain += order[p].gain;
  }
  return { ranks: ranksOfPrefix(order, p, seqs.length), cost, gain };
}
