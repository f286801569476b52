/**
 * One step of ./base-estimate's search: the estimated error at step Δ of the greedy prefix of a crop's
 * quantised components whose estimated bits fit a payload. The same operations in the same order as
 * ./candidate and ./allocate (componentError of ../codec/quantise, the cost model of ./cost-model, poolHull,
 * the greedy total order and prefixForBytes at ratio 1), so the same value bit for bit.
 *
 * Written as four small functions over typed arrays, each with one loop nest: a step runs them once per
 * tiling and step (ten times on an 8-megapixel scan's crop), mostly before any of them is optimised. When
 * they were one function, V8 compiled it on the stack (OSR) while it was still in its first loop, then
 * dropped that code at the first call it had not seen run ("insufficient type feedback for call") and
 * compiled it again: 3–4 optimising compiles of 16–68 ms each, in a run of about 1.2 s of wall.
 * Entries are counted as they are quantised (the counts are integers plus 0.5, exact in any order), and
 * the cost model's table is one flat array (row = the previous entry's class, of ESC + 1 code lengths).
 */
import { DEAD_ZONE } from '../codec/quantise';
import { greedyBlockOrder, poolHull } from './allocate';

/** One tile's SVD less its quantised mean: σ, and U (h-long) and V (w-long) columns stored one after another. */
export interface TileColumns {
  h: number;
  w: number;
  /** ‖tile − mean‖²_F. */
  energy: number;
  s: Float64Array;
  u: Float64Array;
  v: Float64Array;
}

export interface ColumnsPlane {
  tiles: TileColumns[];
  /** Share of this plane's squared error in the reported one. */
  weight: number;
  /** This plane's step is Δ·stepScale. */
  stepScale: number;
}

/** ./cost-model's escape: magnitudes at and above it share one code. */
const ESC = 16;
/** Code lengths per context row (magnitudes 0 … ESC). */
const ROW = ESC + 1;

/**
 * Arrays one step's estimate works in, sized for a tiling by {@link StepScratch.fit}: quantised magnitudes (q),
 * per component its gain, its cost and where its entries start, per tile the components above the dead zone,
 * and per hull block its gain, cost, tile and end rank; the cost model's counts and code lengths.
 */
export class StepScratch {
  q = new Int32Array(0);
  gains = new Float64Array(0);
  costs = new Float64Array(0);
  at = new Int32Array(0);
  ranks = new Int32Array(0);
  bGain = new Float64Array(0);
  bCost = new Float64Array(0);
  bTile = new Int32Array(0);
  bEnd = new Int32Array(0);
  ratio = new Float64Array(0);
  idx = new Uint32Array(0);
  /** Per component of the tiling (tile by tile), the largest |entry| of its U column, then of its V column. */
  peaks = new Float64Array(0);
  /** Per tile, its first component's index in peaks. */
  first = new Int32Array(0);
  /** Per component above the dead zone: 1 when its U entries all quantise to 0, 2 when its V entries do. */
  zero = new Uint8Array(0);
  counts = new Float64Array(4 * ROW);
  table = new Float64Array(4 * ROW);
  /** zeroBits[n]: the estimated bits of n zero entries (n ≤ the longest vector), summed one by one. */
  zeroBits = new Float64Array(0);
  /** poolHull's scratch (one tile's blocks). */
  sg: number[] = [];
  sc: number[] = [];
  se: number[] = [];
  /** The quantised vector's Σ q·x, set by {@link quantiseCount}. */
  dot = 0;

  /** Room for `entries` quantised entries, `n` components, `tiles` tiles and vectors up to `longest` long. */
  fit(entries: number, n: number, tiles: number, longest: number): void {
    if (this.q.length < entries) this.q = new Int32Array(entries);
    if (this.ranks.length < tiles) {
      this.ranks = new Int32Array(tiles);
      this.first = new Int32Array(tiles);
    }
    if (this.zeroBits.length <= longest) this.zeroBits = new Float64Array(longest + 1);
    if (this.gains.length >= n) return;
    this.peaks = new Float64Array(2 * n);
    this.zero = new Uint8Array(n);
    this.gains = new Float64Array(n);
    this.costs = new Float64Array(n);
    this.at = new Int32Array(n);
    this.bGain = new Float64Array(n);
    this.bCost = new Float64Array(n);
    this.bTile = new Int32Array(n);
    this.bEnd = new Int32Array(n);
    this.ratio = new Float64Array(n);
    this.idx = new Uint32Array(n);
  }
}

/**
 * The estimated error at step Δ = `delta` of the greedy prefix whose estimated bits fit `payload` bytes;
 * `baseD` and `s` as {@link readySteps} gave and left them for these planes.
 */
export function errorAtStep(
  planes: ColumnsPlane[],
  delta: number,
  payload: number,
  baseD: number,
  s: StepScratch,
): number {
  s.counts.fill(0.5);
  for (let p = 0, c = 0, tile = 0, used = 0; p < planes.length; p++) {
    const { tiles, weight, stepScale } = planes[p];
    const step = delta * stepScale;
    for (let t = 0; t < tiles.length; t++, tile++) {
      const r = quantiseTile(tiles[t], step, weight, c, s.first[tile], used, s);
      s.ranks[tile] = r;
      c += r;
      used += r * (tiles[t].h + tiles[t].w);
    }
  }
  codeLengthsInto(s.counts, s.table);
  const { zeroBits, table } = s;
  for (let n = 1; n < zeroBits.length; n++) zeroBits[n] = zeroBits[n - 1] + table[0];
  let nb = 0;
  for (let p = 0, c = 0, tile = 0; p < planes.length; p++) {
    const { tiles } = planes[p];
    for (let t = 0; t < tiles.length; t++, tile++) {
      const r = s.ranks[tile];
      nb = tileBlocks(tiles[t], r, c, tile, nb, s);
      c += r;
    }
  }
  return prefixError(payload, baseD, nb, s);
}

/**
 * `s` fitted to the planes' tiles, with s.peaks and s.first (once per tiling: the steps only change the scale;
 * a NaN entry makes its vector's peak +∞, so that vector is always quantised entry by entry, as before).
 * Returns baseD, Σ weight·‖tile − mean‖² in plane and tile order (as the single-function step summed it).
 */
export function readySteps(planes: ColumnsPlane[], s: StepScratch): number {
  let baseD = 0;
  let count = 0;
  let entries = 0;
  let tiles = 0;
  let longest = 0;
  for (const { tiles: ts, weight } of planes)
    for (const t of ts) {
      baseD += weight * t.energy;
      count += t.s.length;
      entries += t.s.length * (t.h + t.w);
      tiles++;
      longest = Math.max(longest, t.h, t.w);
    }
  s.fit(entries, count, tiles, longest);
  for (let p = 0, k = 0, tile = 0; p < planes.length; p++) {
    const ts = planes[p].tiles;
    for (let t = 0; t < ts.length; t++, tile++) {
      s.first[tile] = k;
      k = tilePeaks(ts[t], k, s.peaks);
    }
  }
  return baseD;
}

/** One tile's vector peaks into peaks from component `k` on; returns the next component's index. */
function tilePeaks(t: TileColumns, k: number, peaks: Float64Array): number {
  for (let i = 0; i < t.s.length; i++, k++) {
    peaks[2 * k] = peak(t.u, i * t.h, t.h);
    peaks[2 * k + 1] = peak(t.v, i * t.w, t.w);
  }
  return k;
}

/** max |x[from … from + len)|, +∞ when one is NaN. */
function peak(x: Float64Array, from: number, len: number): number {
  let m = 0;
  for (let j = from; j < from + len; j++) {
    const a = Math.abs(x[j]);
    if (a > m) m = a;
    else if (Number.isNaN(a)) return Number.POSITIVE_INFINITY;
  }
  return m;
}

/**
 * A tile's components above the dead zone at `step` quantised (magnitudes into s.q from `used`), their
 * entries counted, and each one's weighted gain into s.gains from `c` (`k`: the tile's first component in
 * s.peaks); returns how many there are. A vector
 * whose largest magnitude (s.peaks, from {@link readySteps}) quantises to 0 is all zeros (x ↦ x·inv is
 * monotone in rounding too): it is counted at once (len entries of magnitude 0 after 0) and marked in s.zero
 * instead of written, and its Σ q² and Σ q·x are +0, what the loop gives.
 */
function quantiseTile(
  t: TileColumns,
  step: number,
  weight: number,
  c: number,
  k: number,
  used: number,
  s: StepScratch,
): number {
  const { h, w, u, v } = t;
  const sv = t.s;
  const { q, counts, gains, at, peaks, zero } = s;
  const cut = 0.5 + DEAD_ZONE;
  let r = 0;
  while (r < sv.length && !(sv[r] < cut * step)) r++;
  for (let i = 0; i < r; i++, c++) {
    const sigma = sv[i];
    const inv = sigma / step;
    let nu2 = 0;
    let du = 0;
    let nv2 = 0;
    let dv = 0;
    let flags = 0;
    if (peaks[2 * (k + i)] * inv < cut) {
      counts[0] += h;
      flags = 1;
    } else {
      nu2 = quantiseCount(u, i * h, h, inv, q, used, counts, s);
      du = s.dot;
    }
    if (peaks[2 * (k + i) + 1] * inv < cut) {
      counts[0] += w;
      flags |= 2;
    } else {
      nv2 = quantiseCount(v, i * w, w, inv, q, used + h, counts, s);
      dv = s.dot;
    }
    const gain = sigma * sigma - quantisedError(nu2, nv2, du, dv, sigma, step);
    const err = sigma * sigma - gain;
    gains[c] = weight * (sigma * sigma - err);
    zero[c] = flags;
    at[c] = used;
    used += h + w;
  }
  return r;
}

/**
 * Quantise x[from … from + len) at scale `inv` (quantiseVector's arithmetic of ../codec/quantise): magnitudes
 * into q[at …], each counted in its context (./cost-model countVector, from a previous magnitude of 0);
 * returns Σ q² and sets s.dot to Σ q[j]·x[from + j] in order of j (what componentError's dot product gives).
 * Zero entries add nothing to either sum (a sum of nonzero products that starts at +0 is never −0, so adding
 * ±0 leaves it as it is), and zeros after a zero, most of the entries, are counted in a local first.
 */
function quantiseCount(
  x: Float64Array,
  from: number,
  len: number,
  inv: number,
  q: Int32Array,
  at: number,
  counts: Float64Array,
  s: StepScratch,
): number {
  const cut = 0.5 + DEAD_ZONE;
  let n2 = 0;
  let d = 0;
  let row = 0;
  let runs = 0;
  for (let j = 0; j < len; j++) {
    const xj = x[from + j];
    const y = xj * inv;
    const a = Math.abs(y);
    if (a < cut) {
      q[at + j] = 0;
      if (row === 0) runs++;
      else counts[row]++;
      row = 0;
      continue;
    }
    const r = Math.floor(a + 0.5 - DEAD_ZONE);
    q[at + j] = r;
    counts[row + (r < ESC ? r : ESC)]++;
    row = (r < 3 ? r : 3) * ROW;
    n2 += r * r;
    d += (y < 0 ? -r : r) * xj;
  }
  counts[0] += runs;
  s.dot = d;
  return n2;
}

/**
 * componentError of ../codec/quantise for the quantised pair (Σ q², and Σ q·x from {@link quantiseCount})
 * against σ·u·vᵀ, the same operations in the same order.
 */
function quantisedError(
  nu2: number,
  nv2: number,
  du: number,
  dv: number,
  sigma: number,
  step: number,
): number {
  const nu = Math.sqrt(nu2);
  const nv = Math.sqrt(nv2);
  const c = nu > 0 && nv > 0 ? step / Math.sqrt(nu * nv) : 0;
  if (c === 0) return sigma * sigma;
  const e = c * c * nu2 * nv2 + sigma * sigma - 2 * sigma * c * du * dv;
  return e > 0 ? e : 0;
}

/** ./cost-model codeLengths on flat rows: −log₂ of the frequency, plus a sign bit for a non-zero magnitude. */
function codeLengthsInto(counts: Float64Array, table: Float64Array): void {
  for (let row = 0; row < counts.length; row += ROW) {
    let total = 0;
    for (let a = 0; a < ROW; a++) total += counts[row + a];
    for (let a = 0; a < ROW; a++) table[row + a] = -Math.log2(counts[row + a] / total) + (a > 0 ? 1 : 0);
  }
}

/** ./cost-model vectorBits of magnitudes q[from … from + len) under the flat table. */
function magnitudeBits(q: Int32Array, table: Float64Array, from: number, len: number): number {
  let bits = 0;
  let row = 0;
  for (let j = from; j < from + len; j++) {
    const a = q[j];
    bits += table[row + (a < ESC ? a : ESC)];
    if (a >= ESC) bits += 2 * Math.log2(a - ESC + 2) + 1;
    row = (a < 3 ? a : 3) * ROW;
  }
  return bits;
}

/**
 * A tile's first `r` components' costs (bits of U's and V's entries, plus 2; an all-zero vector's from s.zeroBits) and its hull blocks (poolHull
 * of ./allocate) appended to s's block arrays after the first `nb`; returns the new block count.
 */
function tileBlocks(t: TileColumns, r: number, c: number, tile: number, nb: number, s: StepScratch): number {
  const { h, w } = t;
  const { q, table, at, costs, gains, zero, zeroBits, sg, sc, se } = s;
  for (let i = 0; i < r; i++) {
    const f = zero[c + i];
    const bu = f & 1 ? zeroBits[h] : magnitudeBits(q, table, at[c + i], h);
    const bv = f & 2 ? zeroBits[w] : magnitudeBits(q, table, at[c + i] + h, w);
    costs[c + i] = bu + bv + 2;
  }
  const m = poolHull(gains, costs, r, sg, sc, se, c);
  for (let j = 0; j < m; j++, nb++) {
    s.bGain[nb] = sg[j];
    s.bCost[nb] = sc[j];
    s.bTile[nb] = tile;
    s.bEnd[nb] = se[j];
  }
  return nb;
}

/**
 * ./allocate's greedy order of the blocks and ./candidate prefixForBytes at ratio 1 (the longest prefix whose
 * cumulative cost is ≤ the payload's bits): baseD less the prefix's gain, at least 0.
 */
function prefixError(payload: number, baseD: number, nb: number, s: StepScratch): number {
  const { bGain, bCost } = s;
  const order = greedyBlockOrder(bGain, bCost, s.bTile, s.bEnd, nb, s.ratio, s.idx);
  const bits = (payload * 8) / 1;
  let cost = 0;
  let gain = 0;
  for (let i = 0; i < nb; i++) {
    const b = order[i];
    if (!(cost + bCost[b] <= bits)) break;
    cost += bCost[b];
    gain += bGain[b];
  }
  return Math.max(0, baseD - gain);
}
