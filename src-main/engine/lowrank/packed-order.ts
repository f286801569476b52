/**
 * The greedy order of the packed candidate store (./packed-store), as ./candidate orderCandidate gives it
 * for the whole-scan search, in typed arrays: the same cost model (./cost-model), the same hull per tile
 * (./allocate poolHull) and the same sort (a total order: ratio, then tile, then rank), so the order and
 * the file are the same.
 */
import { greedyBlockOrder, poolHull } from './allocate';
import { codeLengths, countVector, newCounts, vectorBits } from './cost-model';
import { grow, type PackedPlane, tileRect, unpack, VectorPool } from './packed-store';

/** Greedy order of the packed candidate (what orderCandidate gives, in typed arrays). */
export interface PackedOrder {
  /** Flat tile (plane k, tile t → k·nTiles + t) and end rank of each block, in greedy order. */
  tile: Int32Array;
  endRank: Int32Array;
  /** cumCost[P]: estimated bits of the first P blocks. */
  cumCost: Float64Array;
}

/** The cost table of every stored component: qu then qv of each, an escaped entry (|v| > 127) counting as ≥ ESC. */
function packedCostTable(store: PackedPlane[]): Float64Array[] {
  const counts = newCounts();
  for (const pp of store)
    for (let t = 0; t < pp.nTiles; t++) {
      if (pp.first[t] === pp.first[t + 1]) continue;
      const { w, h } = tileRect(pp.g, t);
      const q = pp.bands[Math.floor(t / pp.g.cols)].q;
      for (let c = pp.first[t]; c < pp.first[t + 1]; c++) {
        countVector(counts, q, pp.at[c], h);
        countVector(counts, q, pp.at[c] + h, w);
      }
    }
  return codeLengths(counts);
}

/**
 * orderCandidate over the packed store, with the same arithmetic in the same order so the greedy order is
 * the same: the cost table, vectorBits per vector, poolHull per tile and greedyOrder's sort. The refit
 * errors are dropped afterwards.
 */
export function orderPacked(store: PackedPlane[], weights: number[]): PackedOrder {
  const table = packedCostTable(store);
  let bTile = new Int32Array(1024);
  let bEnd = new Int32Array(1024);
  let bGain = new Float64Array(1024);
  let bCost = new Float64Array(1024);
  let nb = 0;
  const sg: number[] = [];
  const sc: number[] = [];
  const se: number[] = [];
  let gains = new Float64Array(64);
  let costs = new Float64Array(64);
  const pool = new VectorPool();
  store.forEach((pp, k) => {
    for (let t = 0; t < pp.nTiles; t++) {
      const f = pp.first[t];
      const n = pp.first[t + 1] - f;
      if (n === 0) continue;
      const { w, h } = tileRect(pp.g, t);
      const qu = pool.get(h, 0);
      const qv = pool.get(w, 1);
      const br = Math.floor(t / pp.g.cols);
      gains = grow(gains, n);
      costs = grow(costs, n);
      for (let i = 0; i < n; i++) {
        unpack(pp, br, f + i, qu, qv);
        const s = pp.sigma[f + i];
        gains[i] = weights[k] * (s * s - pp.err[f + i]);
        costs[i] = vectorBits(qu, table) + vectorBits(qv, table) + 2;
      }
      const m = poolHull(gains, costs, n, sg, sc, se);
      if (nb + m > bTile.length) {
        bTile = grow(bTile, nb + m);
        bEnd = grow(bEnd, nb + m);
        bGain = grow(bGain, nb + m);
        bCost = grow(bCost, nb + m);
      }
      for (let j = 0; j < m; j++) {
        bTile[nb] = k * pp.nTiles + t;
        bEnd[nb] = se[j];
        bGain[nb] = sg[j];
        bCost[nb] = sc[j];
        nb++;
      }
    }
    pp.err = new Float64Array(0);
  });
  const idx = greedyBlockOrder(bGain, bCost, bTile, bEnd, nb);
  const tileOut = new Int32Array(nb);
  const endOut = new Int32Array(nb);
  const cumCost = new Float64Array(nb + 1);
  for (let i = 0; i < nb; i++) {
    const b = idx[i];
    tileOut[i] = bTile[b];
    endOut[i] = bEnd[b];
    cumCost[i + 1] = cumCost[i] + bCost[b];
  }
  return { tile: tileOut, endRank: endOut, cumCost };
}

/** ./candidate prefixRanks over the packed order: ranks per [plane][tile] after the first P blocks. */
export function prefixRanksPacked(store: PackedPlane[], order: PackedOrder, P: number): Int32Array[] {
  const ranks = store.map((pp) => new Int32Array(pp.nTiles));
  const n = store[0].nTiles;
  for (let k = 0; k < P && k < order.tile.length; k++) {
    const f = order.tile[k];
    const p = Math.floor(f / n);
    const t = f - p * n;
    if (order.endRank[k] > ranks[p][t]) ranks[p][t] = order.endRank[k];
  }
  return ranks;
}
