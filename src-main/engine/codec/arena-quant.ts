/**
 * A plane arena's quantiser (with coder 2's bin statistics), transform-domain squared error and dequantisation
 * on two threads at once, as ./arena-split.ts does the load and the 9/7 passes: each is cut into PIECES pieces
 * that the other thread may take, the rest computed here.
 *
 * - The quantiser and the squared error are cut into groups of whole bands (the finest level's three bands and
 *   the rest: about a quarter of the plane each). Each band's floating-point sums (the bin statistics, the
 *   squared error) are then formed by one thread in the band's raster order, the same operations as the
 *   single-thread kernels, so the bits do not depend on which thread took which piece; the non-zero count is
 *   an integer sum. The chunk flags of q (./wasm/runtime.ts CHUNK) are zeroed first and only set by a piece.
 * - q is i16 when every |q| fits (./wasm/arena.ts): the quantiser tries that first and, at the first |q| past
 *   32767, quantises again into an i32 q (same values, statistics and count; only the 16-bit scans' finest steps).
 * - The dequantisation into the work region writes the rebuilt coefficients (f64) over it, whose top holds q
 *   (s = 4 bytes per value in its upper half, or s = 2 in its top quarter): x[i] lies over q[(8i − (8 − s)n)/s]
 *   and the next values. It is done in phases: the first rebuilds the positions below ⌊(8 − s)n/8⌋, which lie
 *   below q; each next one the positions whose x lies over the q the phases before it have read, and whose own
 *   q lies where only later phases write (about s/8 of what remains). A phase's pieces are positions split anyhow, since none writes where another reads; a phase
 *   starts once the one before it is joined. The last phases (small) run here in raster order, as the
 *   single-thread kernel does. Every x is rebuilt from its own q, so the values are the same bit for bit.
 */
import { bounds, PIECES, pass, splits, whileTouchPaused } from './arena-split';
import type { PlaneArena } from './wasm/arena';
import { CHUNK, GEO, PAR, RESULTS } from './wasm/runtime';

/** What a narrow (i16) quantisation piece adds to its count when a |q| does not fit (./wasm/assembly/lifting.ts). */
const NARROW_OVERFLOW = 2 ** 30;

/** Band indices cutting `bands` into PIECES runs of about equal samples: PIECES + 1 bounds, 0 first, nb last. */
export function bandCuts(bands: ArrayLike<{ w: number; h: number }>): number[] {
  const nb = bands.length;
  let total = 0;
  for (let b = 0; b < nb; b++) total += bands[b].w * bands[b].h;
  const cuts = [0];
  let sum = 0;
  for (let b = 0, k = 1; k < PIECES; k++) {
    while (b < nb && sum < (k * total) / PIECES) sum += bands[b].w * bands[b++].h;
    cuts.push(b);
  }
  cuts.push(nb);
  return cuts;
}

/** Bands of piece k (k = −1: all). */
function bandsOf(cuts: number[], k: number): [number, number] {
  return k < 0 ? [cuts[0], cuts[PIECES]] : [cuts[k], cuts[k + 1]];
}

/**
 * Dead-zone quantisation of the arena's coefficients into its q (the band tables written: step, rounding
 * offset, zero threshold per band), with coder 2's bin statistics per band in the kernels' results (4 f64 per
 * band: counts of |q| = 1 and ≥ 2, sums of |c|/Δ − |q|); the number of non-zero q.
 */
export function quantiseSplit(arena: PlaneArena, bands: ArrayLike<{ w: number; h: number }>): number {
  const { n, width } = arena;
  const cuts = bandCuts(bands);
  const run = (narrow: boolean) => {
    arena.setNarrowQ(narrow);
    new Uint8Array(arena.memory.buffer, arena.flagsAt, Math.ceil(n / CHUNK)).fill(0);
    return pass(arena, 'quantise', false, splits(arena, n), (k) => ({
      a: [arena.coeffsAt, arena.qAt, width, ...bandsOf(cuts, k), arena.flagsAt, narrow ? 1 : 0],
    }));
  };
  return whileTouchPaused(arena, () => {
    // A piece's count is below 2^29 (n is); an i16 q's overflow adds 2^30 (./wasm/assembly/lifting.ts).
    const count = run(true);
    return count < NARROW_OVERFLOW ? count : run(false);
  });
}

/** Per band, Σ(c − rebuilt(q))² of the arena's coefficients and q into the kernels' results (1 f64 per band). */
export function errorsSplit(arena: PlaneArena, bands: ArrayLike<{ w: number; h: number }>): void {
  const cuts = bandCuts(bands);
  whileTouchPaused(arena, () =>
    pass(arena, 'errors', false, splits(arena, arena.n), (k) => ({
      a: [arena.coeffsAt, arena.qAt, arena.width, ...bandsOf(cuts, k), arena.narrowQ ? 1 : 0],
    })),
  );
}

/**
 * Per band, Σ(c − rebuilt(q))² of the arena's coefficients quantised by the band tables (Δ, ρ, zero threshold
 * per band, written by the caller), with q worked out in both passes and never stored: first the quantiser's bin
 * statistics (in the kernels' results, as {@link quantiseSplit} leaves them), then `offsets()` (d1, d2 per band,
 * from those statistics), then the error. The sums equal quantiseSplit then {@link errorsSplit} bit for bit
 * (each band's sums formed by one thread in raster order), without writing q, its flags or their pages.
 */
export function errorsAtSplit(
  arena: PlaneArena,
  bands: ArrayLike<{ w: number; h: number }>,
  offsets: () => Float64Array,
): Float64Array {
  const cuts = bandCuts(bands);
  const nb = bands.length;
  const run = (op: 'statsAt' | 'errorsAt') =>
    pass(arena, op, false, splits(arena, arena.n), (k) => ({
      a: [arena.coeffsAt, arena.width, ...bandsOf(cuts, k)],
    }));
  return whileTouchPaused(arena, () => {
    run('statsAt');
    const o = offsets();
    const r = new Float64Array(arena.memory.buffer, RESULTS, 4 * nb);
    for (let b = 0; b < nb; b++) {
      r[4 * b] = o[2 * b];
      r[4 * b + 1] = o[2 * b + 1];
    }
    run('errorsAt');
    return Float64Array.from({ length: nb }, (_, b) => r[4 * b + 2]);
  });
}

/** Positions a dequantisation piece's bounds are rounded to (16 f64 or q values: whole cache lines). */
const PHASE_UNIT = 16;

/**
 * The arena's q rebuilt (the band tables written: Δ, d1, d2 per band) as f64 at `dst`: into its work region,
 * over q, in the phases of this module's header; or into its coefficient region (which q does not overlap),
 * in one pass.
 */
export function dequantiseSplit(arena: PlaneArena, nb: number, dst = arena.workAt): void {
  const { n, width, qAt, workAt } = arena;
  const narrow = arena.narrowQ ? 1 : 0;
  if (dst !== workAt) {
    pass(arena, 'dequantise', false, splits(arena, n), (k) => {
      const [i0, i1] = bounds(k, n, PHASE_UNIT);
      return { a: [qAt, dst, width, nb, i0, i1, narrow] };
    });
    return;
  }
  // q's bytes per value; q starts (8 − s)n bytes into the work region.
  const s = narrow ? 2 : 4;
  let from = 0;
  // A phase is split while its pieces are large enough (./arena-split.ts splits); the rest runs here.
  while (n - from >= 2 && splits(arena, (n - from) / (2 * PIECES))) {
    // x[i] (bytes 8i … 8i + 7) for i < to lies below q or over q[j] with sj < 8i + 8 − (8 − s)n ≤ s·from
    // (read by the phases before), and this phase's q (from … to − 1) lies over x[j] with
    // 8j ≥ (8 − s)n + s·from − 7, so j ≥ to.
    const to = Math.floor(((8 - s) * n + s * from) / 8);
    const start = from;
    pass(arena, 'dequantise', false, true, (k) => {
      const [i0, i1] = bounds(k, to - start, PHASE_UNIT);
      return { a: [qAt, workAt, width, nb, start + i0, start + i1, narrow] };
    });
    from = to;
  }
  (narrow ? arena.lift.dequantiseInPlace16 : arena.lift.dequantiseInPlace)(
    qAt,
    workAt,
    width,
    nb,
    GEO,
    PAR,
    from,
    n,
  );
}
