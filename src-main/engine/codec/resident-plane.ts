/**
 * The plane coder's (./wavelet-plane.ts) operations on a plane whose coefficients are resident in its own
 * WebAssembly memory (./wasm/arena.ts): the forward transform, the quantiser with coder 2's bin statistics,
 * the transform-domain squared error, the band maxima and the reconstruction, each in place, each
 * bit-identical to the TypeScript in ./wavelet-plane.ts and ./coeff-coder.ts (same operations, same order).
 *
 * Which plane and which quantised coefficients are resident is kept here, by object identity: an analysed
 * plane made by {@link analyseResident} maps to its arena, and the arena's q belongs to the last coded or
 * quantised result made from it ({@link ownQ}); a result whose q has since been overwritten, or any plane from
 * elsewhere (a copy in shared memory, the stack coder's own arrays), takes the TypeScript or copying path.
 */
import { PlaneArena } from './wasm/arena';
import { type BandRect, codecKernelsActive, copyFlaggedChunks, GEO, PAR, RESULTS } from './wasm/runtime';
import { LIFTING } from './wavelet-transform';

const arenaOf = new WeakMap<object, PlaneArena>();
/** The result whose quantised values are in each arena's q region, and each result's arena. */
const qOwner = new WeakMap<PlaneArena, object>();
const resultArena = new WeakMap<object, PlaneArena>();

/** The arena holding `plane`'s coefficients, if it has one and the kernels are on. */
export function residentArena(plane: object): PlaneArena | undefined {
  return codecKernelsActive() ? arenaOf.get(plane) : undefined;
}

/** Record that `plane` (an analysed plane object) lives in `arena`. */
export function adoptArena(plane: object, arena: PlaneArena): void {
  arenaOf.set(plane, arena);
}

/** Record that `result`'s quantised values are the ones now in `arena`'s q region. */
export function ownQ(arena: PlaneArena, result: object): void {
  qOwner.set(arena, result);
  resultArena.set(result, arena);
}

/** The arena still holding `result`'s quantised values (and its plane's coefficients), if any. */
export function residentQ(result: object): PlaneArena | undefined {
  const arena = codecKernelsActive() ? resultArena.get(result) : undefined;
  return arena && qOwner.get(arena) === result ? arena : undefined;
}

/** A new arena holding the forward transform (`levels` levels) of `plane`; null when none can be made. */
export function analyseResident(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  levels: number,
): PlaneArena | null {
  const arena = PlaneArena.create(width, height);
  if (!arena) return null;
  arena.load(plane);
  if (levels > 0) arena.transform(levels, LIFTING, false);
  return arena;
}

/**
 * Dead-zone quantisation of the resident coefficients into the arena's q (per band step, rounding offset,
 * zero threshold), the non-zero values also copied into `out` (zeros on entry; only the chunks holding
 * non-zeros are written). Returns the number of non-zero values.
 */
export function quantiseResident(
  arena: PlaneArena,
  bands: BandRect[],
  par: (bi: number) => number[],
  out: Int32Array,
): number {
  arena.bands(bands, par);
  const { width, n } = arena;
  const nonZero = arena.lift.quantise(
    arena.coeffsAt,
    arena.qAt,
    width,
    bands.length,
    GEO,
    PAR,
    arena.flagsAt,
    n,
  );
  copyFlaggedChunks(arena.memory.buffer, arena.qAt, arena.flagsAt, n, out);
  return nonZero;
}

/** Per-band results of the last statistics kernel, `per` f64 per band. */
function results(arena: PlaneArena, nb: number, per: number): Float64Array {
  return new Float64Array(arena.memory.buffer, RESULTS, per * nb);
}

/** Coder 2's bin statistics of the resident coefficients and q (binStats in ./coeff-coder.ts). */
export function binStatsResident(
  arena: PlaneArena,
  bands: BandRect[],
  steps: Float64Array,
): { n: Int32Array; sum: Float64Array } {
  const nb = bands.length;
  arena.bands(bands, (bi) => [steps[bi], 0, 0]);
  arena.lift.binStats(arena.coeffsAt, arena.qAt, arena.width, nb, GEO, PAR, RESULTS);
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

/** Per band, Σ(c − rebuilt(q))² of the resident coefficients and q (par: Δ, d1, d2 per band). */
export function bandErrorsResident(
  arena: PlaneArena,
  bands: BandRect[],
  par: (bi: number) => number[],
): Float64Array {
  arena.bands(bands, par);
  arena.lift.squaredError(arena.coeffsAt, arena.qAt, arena.width, bands.length, GEO, PAR, RESULTS);
  return results(arena, bands.length, 1).slice();
}

/** Per band, the largest magnitude of the resident coefficients. */
export function bandMaxResident(arena: PlaneArena, bands: BandRect[]): Float64Array {
  arena.bands(bands, () => [0, 0, 0]);
  arena.lift.bandMax(arena.coeffsAt, arena.width, bands.length, GEO, RESULTS);
  return results(arena, bands.length, 1).slice();
}

/**
 * The plane rebuilt from the resident q (par: Δ, d1, d2 per band) and inverse-transformed, in the arena's work
 * region: a new array.
 */
export function reconstructResident(
  arena: PlaneArena,
  bands: BandRect[],
  par: (bi: number) => number[],
  levels: number,
): Float64Array {
  arena.bands(bands, par);
  const { width, n, workAt } = arena;
  arena.lift.dequantise(arena.qAt, workAt, width, bands.length, GEO, PAR);
  if (levels > 0) arena.transform(levels, LIFTING, true, workAt);
  return new Float64Array(arena.memory.buffer, workAt, n).slice();
}
