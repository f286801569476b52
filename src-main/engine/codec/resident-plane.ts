/**
 * The plane coder's (./wavelet-plane.ts) operations on a plane whose coefficients are resident in its own
 * WebAssembly memory (./wasm/arena.ts): the forward transform, the quantiser with coder 2's bin statistics,
 * and the reconstruction (the squared error and band maxima: ./resident-bands.ts), each in place, each
 * bit-identical to the TypeScript in ./wavelet-plane.ts and ./coeff-coder.ts (same operations, same order).
 *
 * Which plane and which quantised coefficients are resident is kept here, by object identity: an analysed
 * plane made by {@link analyseResident} maps to its arena, and the arena's q belongs to the last coded or
 * quantised result made from it ({@link ownQ}); a result whose q has since been overwritten, or any plane from
 * elsewhere (a copy in shared memory, the stack coder's own arrays), takes the TypeScript or copying path.
 */
import { dequantiseSplit, quantiseSplit } from './arena-quant';
import { loadSplit, offerTouch, settleTouch, transformSplit } from './arena-split';
import { listedBeside } from './coded-aside';
import { statsOf } from './resident-bands';
import { PlaneArena } from './wasm/arena';
import type { LentRegion, QView } from './wasm/coder-runtime';
import {
  type BandRect,
  CHUNK,
  CHUNK_BITS,
  codecKernelsActive,
  copyFlaggedChunks,
  GEO,
  PAR,
  RESULTS,
} from './wasm/runtime';
import { LIFTING } from './wavelet-transform';

const arenaOf = new WeakMap<object, PlaneArena>();
/** The result whose quantised values are in each arena's q region, and each result's arena. */
const qOwner = new WeakMap<PlaneArena, object>();
const resultArena = new WeakMap<object, PlaneArena>();
/** Whether each result's q is i16 in its arena (./wasm/arena.ts narrowQ): how it is loaded back there. */
const qNarrow = new WeakMap<object, boolean>();
/** A result's q as an array (made on first use), or its non-zeros (positions, values) once its region was reused. */
const denseQ = new WeakMap<object, Int32Array>();
const sparseQ = new WeakMap<object, { at: Int32Array; v: Int32Array }>();
/**
 * Coder 2's bin statistics of the q now in each arena's q region, as the quantiser computed them with its
 * steps (dropped whenever the region is written: {@link releaseQ}).
 */
const qStats = new WeakMap<PlaneArena, { steps: Float64Array; n: Int32Array; sum: Float64Array }>();
/** Arenas whose q region holds its owner's kept non-zeros as loaded back, not handed out as a view since. */
const loadedBack = new WeakSet<PlaneArena>();
/** Arenas whose work region holds a reconstruction handed to a caller: nothing may write it again. */
const workTaken = new WeakSet<PlaneArena>();
/** Each handed-out reconstruction's arena, until its caller gives it back ({@link giveBackWork}). */
const handedOut = new WeakMap<Float64Array, PlaneArena>();

/**
 * The arena holding `plane`'s coefficients, if it has one, the kernels are on and its work region is not
 * handed out (a handed-out reconstruction lies over q: nothing may quantise into it meanwhile).
 */
export function residentArena(plane: object): PlaneArena | undefined {
  const arena = codecKernelsActive() ? arenaOf.get(plane) : undefined;
  return arena && !workTaken.has(arena) && !arena.isReleased && !arena.coefficientsSpent ? arena : undefined;
}

/**
 * The caller is done with `plane` (an analysed plane object): its arena's memory, already touched, goes to the
 * next plane analysed on this thread (./wasm/arena.ts). The result holding the arena's q keeps its non-zeros
 * first, so every result made from `plane` still reads its q; reading `plane`'s coefficients afterwards throws.
 * An arena whose work region is handed out (a reconstruction a caller still holds) is left as it is.
 */
export function releaseResident(plane: object): void {
  const arena = arenaOf.get(plane);
  if (!arena || workTaken.has(arena) || arena.isReleased) return;
  releaseQ(arena);
  settleTouch(arena);
  arena.release();
}

/** Record that `plane` (an analysed plane object) lives in `arena`. */
export function adoptArena(plane: object, arena: PlaneArena): void {
  arenaOf.set(plane, arena);
}

/** Record that `result`'s quantised values are the ones now in `arena`'s q region. */
function ownQ(arena: PlaneArena, result: object): void {
  qOwner.set(arena, result);
  resultArena.set(result, arena);
  qNarrow.set(result, arena.narrowQ);
}

/**
 * `fields` as the result of the quantisation just made in `arena`: its q is read from the arena's q region
 * while it is there (made into an array only when a caller reads it), and kept as its non-zeros when the
 * region is reused (fresh pages cost more than the arithmetic here; most callers never read q).
 */
export function residentResult<T extends object>(arena: PlaneArena, fields: T): T & { q: Int32Array } {
  const out = fields as T & { q: Int32Array };
  Object.defineProperty(out, 'q', { enumerable: true, get: () => qValues(out, arena.n) });
  ownQ(arena, out);
  return out;
}

function qValues(result: object, n: number): Int32Array {
  const known = denseQ.get(result);
  if (known) return known;
  if (discarded.has(result))
    throw new Error('internal: the quantised values of a discarded encode were read');
  const q = new Int32Array(n);
  const arena = resultArena.get(result);
  const sparse = sparseQ.get(result);
  if (arena && qOwner.get(arena) === result)
    copyFlaggedChunks(arena.memory.buffer, arena.qAt, arena.flagsAt, n, q, arena.narrowQ);
  else if (sparse) for (let k = 0; k < sparse.at.length; k++) q[sparse.at[k]] = sparse.v[k];
  denseQ.set(result, q);
  sparseQ.delete(result);
  return q;
}

/** Results whose quantised values their caller said it will not read again ({@link discardQ}). */
const discarded = new WeakSet<object>();

/**
 * The caller will not read `result`'s quantised values again (a rate search's encode that is not kept, or
 * whose values it would make again from the coefficients): when its arena's q region is next reused, they
 * are dropped instead of kept as non-zeros (a pass over q and two fresh arrays). Reading them afterwards
 * throws. No change (false) for a result whose q is an array already, or that is not resident.
 */
export function discardQ(result: object): boolean {
  const arena = resultArena.get(result);
  if (!arena || denseQ.has(result)) return false;
  discarded.add(result);
  resultArena.delete(result);
  sparseQ.delete(result);
  listedInPlace.delete(result);
  if (qOwner.get(arena) === result) qOwner.delete(arena);
  return true;
}

/** Before the arena's q region is overwritten: keep the non-zeros of the result it holds (unless it has its array). */
function releaseQ(arena: PlaneArena): void {
  const owner = qOwner.get(arena);
  qOwner.delete(arena);
  qStats.delete(arena);
  // Values loaded back from their non-zeros and not handed out since: those non-zeros are still right.
  const unchanged = loadedBack.delete(arena);
  // Listed from the region while it still held them ({@link keepNonZeros}): the region has not changed since.
  const listed = owner !== undefined && listedInPlace.delete(owner);
  if (!owner || denseQ.has(owner) || unchanged || listed || !resultArena.has(owner)) return;
  sparseQ.set(owner, nonZerosIn(arena, owner));
}

/** Results whose non-zeros were listed from their arena's q region while they held it, and still hold it. */
const listedInPlace = new WeakSet<object>();

/** The non-zeros (positions, values) of the q region, which `owner` holds. */
function nonZerosIn(arena: PlaneArena, owner: object): { at: Int32Array; v: Int32Array } {
  const listed = listedBeside(owner);
  if (listed) return listed;
  const { n, qAt } = arena;
  // The quantiser counted the non-zeros (the result's nonZero). Below q lies free room (the coder's map, not in
  // use now) for 4n bytes: the kernel writes positions and values right below q when they fit, else a pass here.
  const count = (owner as { nonZero?: number }).nonZero ?? 0;
  let at: Int32Array;
  let v: Int32Array;
  let k = 0;
  if (8 * count <= 4 * n) {
    const from = Math.floor((qAt - 8 * count) / 8) * 8;
    const compact = arena.narrowQ ? arena.lift.compactNonZero16 : arena.lift.compactNonZero;
    k = compact(qAt, arena.flagsAt, n, from, from + 4 * count);
    const buf = arena.memory.buffer;
    at = new Int32Array(buf, from, k).slice();
    v = new Int32Array(buf, from + 4 * count, k).slice();
  } else {
    const q = arena.qView();
    const flags = new Uint8Array(arena.memory.buffer, arena.flagsAt, Math.ceil(n / CHUNK));
    at = new Int32Array(count);
    v = new Int32Array(count);
    for (let j = 0; j < flags.length && k < count; j++) {
      if (!flags[j]) continue;
      const end = Math.min(n, (j + 1) * CHUNK);
      for (let i = j * CHUNK; i < end; i++)
        if (q[i] !== 0) {
          at[k] = i;
          v[k++] = q[i];
        }
    }
  }
  // (Fewer when a step far below the safe range wrapped a magnitude to 0, as an Int32Array store does.)
  return { at: at.subarray(0, k), v: v.subarray(0, k) };
}

/** The arena still holding `result`'s quantised values (and its plane's coefficients), if any. */
export function residentQ(result: object): PlaneArena | undefined {
  const arena = codecKernelsActive() ? resultArena.get(result) : undefined;
  if (!arena || workTaken.has(arena) || arena.isReleased || arena.onLoan) return undefined;
  if (qOwner.get(arena) === result) return arena;
  // Load it back (warm memory: cheaper than any copying path): its array, or zeros and its non-zeros.
  const dense = denseQ.get(result);
  const sparse = sparseQ.get(result);
  if (!dense && !sparse) return undefined;
  releaseQ(arena);
  arena.setNarrowQ(qNarrow.get(result) === true);
  const q = arena.qView();
  const flags = new Uint8Array(arena.memory.buffer, arena.flagsAt, Math.ceil(arena.n / CHUNK));
  if (dense) {
    q.set(dense);
    flags.fill(1);
  } else if (sparse) {
    q.fill(0);
    flags.fill(0);
    for (let k = 0; k < sparse.at.length; k++) {
      q[sparse.at[k]] = sparse.v[k];
      flags[sparse.at[k] >> CHUNK_BITS] = 1;
    }
    loadedBack.add(arena);
  }
  qOwner.set(arena, result);
  return arena;
}

/**
 * For a check that range-decodes `result`'s bytes again into its arena's q region (../lowrank/residual-check):
 * the arena with that region released, and `result`'s values to compare the decoded ones with: its non-zeros
 * (positions, values; kept here as when the region is reused) or its array when one was made. Undefined when
 * `result` is not resident (or its arena's work region is handed out). A later rebuild loads `result` back.
 */
export function releaseForRedecode(
  result: object,
): { arena: PlaneArena; dense?: Int32Array; at?: Int32Array; v?: Int32Array } | undefined {
  const arena = residentQ(result);
  if (!arena) return undefined;
  releaseQ(arena);
  const dense = denseQ.get(result);
  const sparse = sparseQ.get(result);
  return dense ? { arena, dense } : sparse && { arena, at: sparse.at, v: sparse.v };
}

/**
 * For a check that range-decodes `result`'s bytes elsewhere (../lowrank/residual-check, on another thread):
 * the arena holding `result`'s q (loaded back if the region was reused) and `result`'s values to compare the
 * decoded ones with, listed from that region now: its non-zeros (positions, values), or its array when one was
 * made. The region stays `result`'s, so the plane's next rebuild reads it where it is, and the region's next
 * reuse keeps these non-zeros without listing them again. Undefined when `result` is not resident.
 */
export function keepNonZeros(
  result: object,
): { arena: PlaneArena; dense?: Int32Array; at?: Int32Array; v?: Int32Array } | undefined {
  const arena = residentQ(result);
  if (!arena) return undefined;
  const dense = denseQ.get(result);
  if (dense) return { arena, dense };
  const listed = nonZerosIn(arena, result);
  sparseQ.set(result, listed);
  listedInPlace.add(result);
  return { arena, ...listed };
}

/** `arena`'s encode is decided (./wasm/arena.ts spend): once its rebuild has read q (or when the returned
 * function is called), q's region and the map go to `start`, for a decode with band table `table`. */
export function lendAfterRebuild(
  arena: PlaneArena,
  table: Int32Array,
  start: (region: LentRegion | undefined) => void,
): () => void {
  arena.spend(() => {
    releaseQ(arena);
    settleTouch(arena);
    start(arena.isReleased ? undefined : arena.lendWork(table));
  });
  return () => arena.runDeferred();
}

/**
 * `result`'s quantised values where they lie in its arena (loaded back when the region was reused), as a view
 * valid until the next call on that arena; undefined when they are not resident or already made into an array
 * (read `result.q` then). Reading them in place skips the array {@link residentResult}'s `q` would make: n
 * fresh values, mostly zero pages.
 */
export function residentQView(result: object): QView | undefined {
  if (denseQ.has(result)) return undefined;
  const arena = residentQ(result);
  if (!arena) return undefined;
  loadedBack.delete(arena);
  listedInPlace.delete(result);
  return arena.qView();
}

/** A new arena holding `plane`'s forward transform (`levels` levels; `oneRebuild`: ./wasm/arena.ts), or null. */
export function analyseResident(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  levels: number,
  oneRebuild = false,
): PlaneArena | null {
  const arena = PlaneArena.create(width, height);
  if (!arena) return null;
  if (oneRebuild) arena.oneRebuild(levels);
  loadSplit(arena, plane);
  if (levels > 0) transformSplit(arena, levels, LIFTING, false);
  offerTouch(arena);
  return arena;
}

/**
 * Dead-zone quantisation of the resident coefficients into the arena's q (per band step, rounding offset,
 * zero threshold), split with the other thread (./arena-quant.ts); the number of non-zero values. Make its
 * result with {@link residentResult}. Coder 2's bin statistics come with it ({@link binStatsResident}).
 */
export function quantiseResident(
  arena: PlaneArena,
  bands: BandRect[],
  par: (bi: number) => number[],
): number {
  releaseQ(arena);
  arena.bands(bands, par);
  const nonZero = quantiseSplit(arena, bands);
  qStats.set(arena, {
    steps: Float64Array.from(bands, (_, bi) => par(bi)[0]),
    ...statsOf(arena, bands.length),
  });
  return nonZero;
}

/**
 * Coder 2's bin statistics of the resident coefficients and q (binStats in ./coeff-coder.ts): those the
 * quantiser made with the same steps when the q region still holds its values, else computed here.
 */
export function binStatsResident(
  arena: PlaneArena,
  bands: BandRect[],
  steps: Float64Array,
): { n: Int32Array; sum: Float64Array } {
  const nb = bands.length;
  const known = qStats.get(arena);
  if (known && known.steps.length === nb && known.steps.every((d, bi) => d === steps[bi]))
    return { n: known.n.slice(), sum: known.sum.slice() };
  arena.bands(bands, (bi) => [steps[bi], 0, 0]);
  const binStats = arena.narrowQ ? arena.lift.binStats16 : arena.lift.binStats;
  binStats(arena.coeffsAt, arena.qAt, arena.width, nb, GEO, PAR, RESULTS);
  return statsOf(arena, nb);
}

/**
 * The plane rebuilt from the resident q (par: Δ, d1, d2 per band) and inverse-transformed in the arena's work
 * region over q (whose non-zeros are kept first, as when a quantisation reuses the region), or over the
 * coefficients once the encode is decided (./wasm/arena.ts spend, whose deferred start runs once q is read):
 * a copy, or with `handOut` the region itself (no copy into fresh pages; for the decoded file, usually the
 * last use of the plane). After a hand-out the arena is not used again (undefined: take the copying paths)
 * until the caller gives it back ({@link giveBackWork}), so nothing writes over it, and the memory keeps its size.
 */
export function reconstructResident(
  arena: PlaneArena,
  bands: BandRect[],
  par: (bi: number) => number[],
  levels: number,
  handOut: boolean,
): Float64Array | undefined {
  if (workTaken.has(arena)) return undefined;
  arena.bands(bands, par);
  // The region's q is about to be overwritten: its owner keeps its non-zeros (loaded back when next needed).
  releaseQ(arena);
  settleTouch(arena);
  if (handOut) workTaken.add(arena);
  const at = arena.coefficientsSpent ? arena.coeffsAt : arena.workAt;
  dequantiseSplit(arena, bands.length, at);
  arena.runDeferred();
  if (levels > 0) transformSplit(arena, levels, LIFTING, true, at);
  const x = new Float64Array(arena.memory.buffer, at, arena.n);
  if (!handOut) return x.slice();
  handedOut.set(x, arena);
  return x;
}

/**
 * The caller of a {@link reconstructResident} hand-out is done with `x` and drops every reference to it: its
 * arena's work region is free again, so the plane's next rebuild (a quality floor decodes several files) runs
 * in that warm memory instead of the copying path's fresh pages. Any other array is ignored.
 */
export function giveBackWork(x: Float64Array): void {
  const arena = handedOut.get(x);
  if (!arena) return;
  handedOut.delete(x);
  workTaken.delete(arena);
}

/** The arena whose memory holds `x`, a {@link reconstructResident} hand-out not given back yet; else undefined. */
export function handOutArena(x: Float64Array): PlaneArena | undefined {
  return handedOut.get(x);
}

/**
 * Whether the arena's work region holds nothing anyone reads again (no result's q, no handed-out or lent
 * region), so a kernel may use it as scratch until the next quantisation or rebuild writes it.
 */
export function workIdle(arena: PlaneArena): boolean {
  return !qOwner.has(arena) && !workTaken.has(arena) && !arena.onLoan && !arena.isReleased;
}

/** Whether the arena's coder may run (its work region is not handed out). */
export function workFree(arena: PlaneArena): boolean {
  return !workTaken.has(arena);
}
