/**
 * Per-band figures of a plane whose coefficients are resident in its arena (./wasm/arena.ts): the bin
 * statistics in the kernels' results, the transform-domain squared error (of the q in the region, or at a step
 * without writing q) and the band maxima, each bit-identical to the TypeScript in ./wavelet-plane.ts and
 * ./coeff-coder.ts. Kept apart from ./resident-plane.ts, which owns which q is where.
 */
import { errorsAtSplit, errorsSplit } from './arena-quant';
import type { PlaneArena } from './wasm/arena';
import { type BandRect, GEO, RESULTS } from './wasm/runtime';

/** Each arena's band maxima (its coefficients do not change), with the bands they are of. */
const maxima = new WeakMap<PlaneArena, { bands: BandRect[]; top: Float64Array }>();

/** The bin statistics in the kernels' results (4 f64 per band: n1, n2, s1, s2) as counts and sums. */
export function statsOf(arena: PlaneArena, nb: number): { n: Int32Array; sum: Float64Array } {
  const r = results(arena, nb, 4);
  const n = new Int32Array(2 * nb);
  const sum = new Float64Array(2 * nb);
  for (let b = 0; b < nb; b++) {
    n[2 * b] = r[4 * b];
    n[2 * b + 1] = r[4 * b + 1];
    sum[2 * b] = r[4 * b + 2];
    sum[2 * b + 1] = r[4 * b + 3];
  }
  return { n, sum };
}

/** Per-band results of the last statistics kernel, `per` f64 per band. */
function results(arena: PlaneArena, nb: number, per: number): Float64Array {
  return new Float64Array(arena.memory.buffer, RESULTS, per * nb);
}

/** Per band, Σ(c − rebuilt(q))² of the resident coefficients and q (par: Δ, d1, d2 per band). */
export function bandErrorsResident(
  arena: PlaneArena,
  bands: BandRect[],
  par: (bi: number) => number[],
): Float64Array {
  arena.bands(bands, par);
  errorsSplit(arena, bands);
  return results(arena, bands.length, 1).slice();
}

/**
 * Per band, Σ(c − rebuilt(q))² of the resident coefficients quantised by par (Δ, ρ, zero threshold per band)
 * and rebuilt with the offsets `offsets` gives for that quantisation's bin statistics: quantiseResident then
 * bandErrorsResident's sums, bit for bit, with no q written (./arena-quant.ts errorsAtSplit); q, its owner and
 * its statistics stay as they were.
 */
export function errorsAtResident(
  arena: PlaneArena,
  bands: BandRect[],
  par: (bi: number) => number[],
  offsets: (stats: { n: Int32Array; sum: Float64Array }) => Float64Array,
): Float64Array {
  arena.bands(bands, par);
  return errorsAtSplit(arena, bands, () => offsets(statsOf(arena, bands.length)));
}

/** Per band, the largest magnitude of the resident coefficients (found once per arena and bands). */
export function bandMaxResident(arena: PlaneArena, bands: BandRect[]): Float64Array {
  const known = maxima.get(arena);
  if (known?.bands === bands) return known.top.slice();
  arena.bands(bands, () => [0, 0, 0]);
  arena.lift.bandMax(arena.coeffsAt, arena.width, bands.length, GEO, RESULTS);
  const top = results(arena, bands.length, 1).slice();
  maxima.set(arena, { bands, top });
  return top.slice();
}
