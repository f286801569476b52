// Greedy rank allocation against exhaustive search (the optimality argument is in src-main/engine/lowrank/allocate.ts:
// Fox 1966 marginal analysis; Shoham & Gersho 1988 — both from memory).
import { describe, expect, it } from 'vitest';
import {
  allocateGreedy,
  greedyOrder,
  hullBlocks,
  ranksOfPrefix,
} from '../../src-main/engine/lowrank/allocate';
import { lcg } from '../helpers/lcg';

/** Best total gain over all rank vectors whose total cost ≤ budget (exhaustive). */
function bruteForce(gains: number[][], costs: number[][], budget: number): number {
  let best = 0;
  const rec = (t: number, cost: number, gain: number) => {
    if (t === gains.length) {
      best = Math.max(best, gain);
      return;
    }
    let c = cost;
    let g = gain;
    rec(t + 1, c, g);
    for (let i = 0; i < gains[t].length; i++) {
      c += costs[t][i];
      g += gains[t][i];
      if (c > budget + 1e-9) break;
      rec(t + 1, c, g);
    }
  };
  rec(0, 0, 0);
  return best;
}

describe('greedy allocation', () => {
  it('is optimal at every greedy breakpoint when σ² is non-increasing and costs are equal within a tile', () => {
    const rnd = lcg(11);
    for (let trial = 0; trial < 60; trial++) {
      const tiles = 2 + Math.floor(rnd() * 3);
      const gains: number[][] = [];
      const costs: number[][] = [];
      for (let t = 0; t < tiles; t++) {
        const n = 1 + Math.floor(rnd() * 5);
        const c = 1 + Math.floor(rnd() * 4); // h_t + w_t entries per component differ across tiles
        let s = 100 * rnd() + 1;
        const g: number[] = [];
        for (let i = 0; i < n; i++) {
          g.push(s * s);
          s *= 0.3 + 0.7 * rnd(); // σ non-increasing
        }
        gains.push(g);
        costs.push(new Array(n).fill(c));
      }
      const order = greedyOrder(gains.map((g, t) => ({ gains: g, costs: costs[t] })));
      let cost = 0;
      let gain = 0;
      for (let p = 0; p <= order.length; p++) {
        // Breakpoint p: the first p blocks.
        expect(gain).toBeCloseTo(bruteForce(gains, costs, cost), 6);
        const r = ranksOfPrefix(order, p, tiles);
        for (const [t, k] of r.entries()) expect(k).toBeLessThanOrEqual(gains[t].length);
        if (p < order.length) {
          cost += order[p].cost;
          gain += order[p].gain;
        }
      }
    }
  });

  it('between breakpoints it may lose to the knapsack optimum by less than one component (the stated caveat)', () => {
    // Tile A: one component of gain 10, cost 10 (ratio 1). Tile B: gain 9.9, cost 1 then gain 8, cost 9.
    const seqs = [
      { gains: [10], costs: [10] },
      { gains: [9.9, 0.5], costs: [1, 9] },
    ];
    const r = allocateGreedy(seqs, 10);
    expect(Array.from(r.ranks)).toEqual([0, 1]);
    expect(r.gain).toBeCloseTo(9.9, 9);
    expect(bruteForce([[10], [9.9, 0.5]], [[10], [1, 9]], 10)).toBeCloseTo(10.4, 9);
    expect(10.4 - r.gain).toBeLessThan(10); // less than the largest single component gain
  });

  it('pools components whose gain per cost rises (upper concave hull) and drops useless ones', () => {
    const b = hullBlocks(0, { gains: [4, 3, 0], costs: [4, 1, 1] });
    // Ratios 1 then 3: pooled into one block of gain 7 and cost 5; the zero-gain component is dropped.
    expect(b).toEqual([{ tile: 0, endRank: 2, gain: 7, cost: 5 }]);
  });
});
