/**
 * Factoring one band of tile rows for the large-scan encoder (./tiled): constant tiles (blank paper) and
 * quiet tiles (too weak for any component to survive quantisation) skip the SVD, with a proof that the file
 * is unchanged; components that cannot reach the crop's slope are pruned as they stream in.
 */
import { DEAD_ZONE } from '../codec/quantise';
import { tileGrid } from '../codec/quantised';
import type { Comp } from './candidate';
import { vectorBits } from './cost-model';
import type { SampleArray } from './decode-image';
import { factorPlane, type PlaneFactors, type TileFactors } from './factorise';
import { type Geometry, type PackedPlane, tileRect } from './packed-store';

const EMPTY_F32 = new Float32Array(0);
const EMPTY_F64 = new Float64Array(0);
/** Singular vectors are dropped once a tile's components are quantised. */
const NO_VECTORS = { rows: 0, cols: 0, data: EMPTY_F64 };

/** Samples [from, to) of an integer plane as float64, into `out`. */
export function toFloat(p: SampleArray, from: number, to: number, out: Float64Array): Float64Array {
  const n = to - from;
  for (let i = 0; i < n; i++) out[i] = p[from + i];
  return out.subarray(0, n);
}

/**
 * Below this fraction of the dead-zone energy a tile is "quiet" and skips its SVD. The margin covers the
 * rounding of the computed σ₁ (a one-sided Jacobi SVD applies orthogonal rotations, which keep ‖A‖_F to
 * within a few units of roundoff per sweep; common practice, from memory), many orders of magnitude over.
 */
const QUIET_MARGIN = 1 - 1e-6;

/**
 * The energy below which a mean-removed tile cannot keep any component at a plane step `step`.
 *
 * Proof. Let A be the tile less its stored mean, with singular values σ₁ ≥ σ₂ ≥ … and
 * ‖A‖²_F = Σσᵢ² (Golub & Van Loan, Matrix Computations, 4th ed., §2.4.2, from memory), so σ₁ ≤ ‖A‖_F.
 * Component i is stored as a = σᵢuᵢ and b = σᵢvᵢ (‖uᵢ‖ = ‖vᵢ‖ = 1, ../codec/quantise.ts), so every entry
 * has |aⱼ| ≤ σᵢ, and quantiseVector rounds x to 0 when |x| < (0.5 + DEAD_ZONE)·Δ. Hence, if
 * ‖A‖_F < (0.5 + DEAD_ZONE)·Δ, every entry of every component quantises to 0: the decoder's scale
 * (componentScale) is 0 and the tile is rank 0 at any budget. The candidate search (candidate.ts
 * tileComponents) states the same rule per component — it stops at the first σᵢ < (0.5 + DEAD_ZONE)·Δ —
 * and σ₁ ≤ ‖A‖_F makes it stop before the first. With QUIET_MARGIN the computed σ₁ (which may exceed
 * ‖A‖_F by roundoff) is still under the threshold, so a skipped tile is one the full path gives no
 * component, and the file is unchanged. test/bigscan checks this on random tiles.
 */
export function quietEnergy(step: number): number {
  const t = (0.5 + DEAD_ZONE) * step;
  return QUIET_MARGIN * t * t;
}

/**
 * factorPlane over one band (mean removal, exact Jacobi per tile), with constant tiles short-circuited:
 * a tile whose samples all equal its stored mean has zero energy and no components, found in one pass and
 * without copying it. A tile whose mean-removed energy is below `quietBelow` (see {@link quietEnergy}) is
 * "quiet": its mean and energy are computed as factorPlane computes them and its SVD is skipped (its index
 * is returned in `quiet`). Other tiles are copied out and factored alone, which gives factorPlane's result.
 */
export function factorBand(
  band: Float64Array,
  width: number,
  bh: number,
  tile: number,
  meanStep: number,
  quietBelow: number,
): { factors: PlaneFactors; quiet: number[] } {
  const rects = tileGrid(width, bh, tile);
  const out: TileFactors[] = [];
  const quiet: number[] = [];
  for (let t = 0; t < rects.length; t++) {
    const rect = rects[t];
    const { x, y, w, h } = rect;
    const first = band[y * width + x];
    let constant = true;
    for (let i = 0; i < h && constant; i++) {
      const row = (y + i) * width + x;
      for (let j = 0; j < w; j++)
        if (band[row + j] !== first) {
          constant = false;
          break;
        }
    }
    const meanQ = Math.round(first / meanStep);
    if (constant && meanQ * meanStep === first) {
      out.push({ rect, meanQ, energy: 0, data: EMPTY_F32, s: EMPTY_F64, U: NO_VECTORS, V: NO_VECTORS });
      continue;
    }
    const a = new Float64Array(w * h);
    for (let i = 0; i < h; i++) a.set(band.subarray((y + i) * width + x, (y + i) * width + x + w), i * w);
    if (quietBelow > 0) {
      const q = meanAndEnergy(a, meanStep);
      if (q.energy < quietBelow) {
        out.push({
          rect,
          meanQ: q.meanQ,
          energy: q.energy,
          data: EMPTY_F32,
          s: EMPTY_F64,
          U: NO_VECTORS,
          V: NO_VECTORS,
        });
        quiet.push(t);
        continue;
      }
    }
    const f = factorPlane(a, w, h, { tile, meanRemoval: true, meanStep });
    out.push({ ...f.tiles[0], rect });
  }
  return { factors: { width, height: bh, tile, meanStep, tiles: out }, quiet };
}

/** A tile's quantised mean and ‖tile − mean‖²_F, with factorPlane's expressions in its order. */
export function meanAndEnergy(a: Float64Array, meanStep: number): { meanQ: number; energy: number } {
  let sum = 0;
  for (let k = 0; k < a.length; k++) sum += a[k];
  const meanQ = Math.round(sum / a.length / meanStep);
  const mean = meanQ * meanStep;
  let energy = 0;
  for (let k = 0; k < a.length; k++) {
    const d = a[k] - mean;
    energy += d * d;
  }
  return { meanQ, energy };
}

/**
 * Fraction of the crop's final slope below which components are dropped while streaming (the crop stands
 * for the scan; the margin covers a scan richer than its centre). Measured on an 8000×8000 RGB page at
 * --budget 5 %: 1/4 dropped so many that the file stayed 15 % under the budget at 41.3 dB; 1/16 kept the
 * unpruned result (42.84 dB) and dropped 644 k components, and peak memory fell from 2.1 to 1.25 GB.
 */
export const PRUNE_SLOPE = 1 / 16;

/**
 * Components of a tile worth keeping: up to the last one whose own gain per estimated bit is ≥ minSlope.
 * (A greedy block taken at slope λ has an average slope ≥ λ, so one of its components has; the components
 * after the last such one are not kept. Heuristic: blocks whose best member comes before a weak tail lose
 * that tail, which the measured sizes showed to be rare.)
 */
export function usefulPrefix(
  list: Comp[],
  errs: Float64Array,
  s: Float64Array,
  weight: number,
  table: Float64Array[],
  minSlope: number,
): number {
  let keep = 0;
  for (let i = 0; i < list.length; i++) {
    const gain = weight * (s[i] * s[i] - errs[i]);
    const bits = vectorBits(list[i].qu, table) + vectorBits(list[i].qv, table) + 2;
    if (gain >= minSlope * bits) keep = i + 1;
  }
  return keep;
}

/**
 * The spectral bound with the quiet tiles in: a quiet tile's σ₁ is at most √energy·(1 + roundoff), so only
 * the quiet tiles whose bound exceeds the maximum so far are factored again (from the scan's samples, the
 * same floats as in the band pass), and their σ₁ taken. Usually none: any tile cut inside its candidate
 * list has a σ above the dead zone, which is above every quiet tile's σ₁.
 */
export function quietSpectral(
  store: PackedPlane[],
  g: Geometry,
  spectral: number,
  bandFloats: (y0: number, bh: number) => Float64Array[],
  meanStep: number,
): number {
  let best = spectral;
  const todo: Array<[number, number]> = [];
  store.forEach((pp, k) => {
    for (const t of pp.quiet) if (Math.sqrt(pp.energy[t]) * (1 + 1e-6) > best) todo.push([k, t]);
  });
  todo.sort((a, b) => a[1] - b[1] || a[0] - b[0]);
  let row = -1;
  let bands: Float64Array[] = [];
  for (const [k, t] of todo) {
    const r = Math.floor(t / g.cols);
    const y0 = r * g.tile;
    const bh = Math.min(g.tile, g.height - y0);
    if (r !== row) {
      bands = bandFloats(y0, bh).map((b) => b.slice());
      row = r;
    }
    const { x, w, h } = tileRect(g, t);
    const a = new Float64Array(w * h);
    for (let i = 0; i < h; i++) a.set(bands[k].subarray(i * g.width + x, i * g.width + x + w), i * w);
    const f = factorPlane(a, w, h, { tile: g.tile, meanRemoval: true, meanStep });
    const s = f.tiles[0].s;
    if (s.length > 0) best = Math.max(best, s[0]);
  }
  return best;
}
