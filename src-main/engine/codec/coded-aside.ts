/**
 * Work the other thread does on a plane's just-quantised q while this thread range-codes it (coder 2 on the
 * plane's arena only reads q, ./coeff-coder-resident.ts): the per-band squared errors of the plane rebuilt from
 * that q, and q's non-zeros (positions and values, on shared memory). This thread would work both out later
 * if that encode is kept: the rate search's error of the kept encode (./wavelet-rebuild.ts codedSquaredError)
 * and the non-zeros the report's check compares a decode with (./resident-plane.ts, ../lowrank/residual-check).
 * Taken from here they leave this thread's critical path; the other thread is otherwise idle during the range
 * coding, which it cannot share.
 *
 * Same numbers as this thread's: the sums come from the same kernel on the same coefficients, q and band
 * tables ('aside' pieces of ./arena-split.ts, each band's sum formed by one call in raster order, as the
 * 'errors' pieces form it); the non-zeros are q's in raster order, as ./resident-plane.ts lists them. When the
 * other thread has not finished a part by the end of the encode, that part is dropped (the stop word: it
 * ends within a few hundred chunks) and computed later where it is needed, as before.
 */
import { offerAlone } from './arena-split';
import type { PlaneArena } from './wasm/arena';
import type { BandRect } from './wasm/runtime';

/** The sums and non-zeros made beside each result's encode, by the result (its q) they are of. */
const sumsOf = new WeakMap<object, Float64Array>();
const listedOf = new WeakMap<object, { at: Int32Array; v: Int32Array }>();

/**
 * Run `encode` (the range coding of `result`'s q, resident in `arena`, its map at `map`: nothing may write the
 * arena's q region or kernel tables meanwhile) while the other thread lists its `nonZero` non-zeros and works
 * out its band errors (Δ, d1, d2 per band from `par`); returns what `encode` returns. Without a second thread
 * (or an arena it shares), `encode` alone.
 */
export function besideEncode<T>(
  arena: PlaneArena,
  result: object,
  bands: BandRect[],
  par: (bi: number) => number[],
  nonZero: number,
  map: number,
  encode: () => T,
): T {
  const nb = bands.length;
  const n = arena.n;
  // A list as large as q itself is not worth the fresh pages (the pass that needs it reads q where it is).
  const list = nonZero > 0 && 8 * nonZero <= 4 * n;
  // The kernel lists them right below the coder's map (in the work region's lower half, which nothing reads
  // during an encode), where they fit.
  const room = Math.floor((map - 8 * nonZero) / 8) * 8;
  const shared = (bytes: number) => new SharedArrayBuffer(bytes);
  const stop = new Int32Array(shared(4));
  const sums = new Float64Array(shared(8 * (nb + 1)));
  const at = list ? new Int32Array(shared(4 * nonZero)) : undefined;
  const v = list ? new Int32Array(shared(4 * nonZero)) : undefined;
  arena.bands(bands, par);
  const where = [arena.coeffsAt, arena.qAt, arena.width, nb, arena.flagsAt, n];
  const fits = map < arena.qAt && room >= arena.workAt;
  const narrow = arena.narrowQ ? 1 : 0;
  const join = offerAlone(arena, 'aside', [...where, fits ? room : 0, narrow], { stop, sums, at, v });
  if (!join) return encode();
  let out: T;
  try {
    out = encode();
  } finally {
    // The encode is over (or failed): whatever the other thread has not done is dropped; it stops soon.
    Atomics.store(stop, 0, 1);
    const listed = join();
    if (sums[nb] === 1) sumsOf.set(result, sums.subarray(0, nb));
    if (listed >= 0 && at && v)
      listedOf.set(result, { at: at.subarray(0, listed), v: v.subarray(0, listed) });
  }
  return out;
}

/** The band errors worked out beside `result`'s encode (with the Δ, d1, d2 it was coded with), if any. */
export function errorsBeside(result: object): Float64Array | undefined {
  return sumsOf.get(result);
}

/** `result`'s non-zeros listed beside its encode (positions, values; shared memory), if any. */
export function listedBeside(result: object): { at: Int32Array; v: Int32Array } | undefined {
  return listedOf.get(result);
}
