/**
 * The computation of the 'aside' piece of ./arena-split.ts, which ./coded-aside.ts offers to the other thread
 * beside a resident plane's range coding: q's non-zeros and the band errors of the plane rebuilt from q, from the
 * arena's shared memory. Kept apart from ./arena-split.ts, which runs it as one of its pieces.
 */
import { CHUNK, GEO, type LiftingExports, PAR, RESULTS } from './wasm/runtime';

/** What the piece reads (./arena-split.ts ArenaPassArgs: a = x, q, width, nb, flags, n, room, narrow). */
export interface AsidePieceArgs {
  memory: WebAssembly.Memory;
  a: number[];
  stop?: Int32Array;
  sums?: Float64Array;
  at?: Int32Array;
  v?: Int32Array;
}

/**
 * The piece, while the arena's own thread range-codes q (which the coder only reads):
 * q's non-zeros in raster order into `at` and `v` (listed by the kernel into the free room at `room`, below the
 * coder's map, then copied; by a pass here when there is no room), then per band Σ(c − rebuilt(q))² (the band
 * tables and Δ, d1, d2 written by the caller) into `sums`, band by band as the 'errors' pieces form them, and 1
 * after them. Each part is skipped once `stop` is set. Returns the non-zeros listed, or −1 for none.
 */
export function asidePiece(args: AsidePieceArgs, lift: LiftingExports): number {
  const [x, qAt, width, nb, flagsAt, n, room, narrow] = args.a;
  const { stop, sums, at, v } = args;
  const stopped = () => stop !== undefined && Atomics.load(stop, 0) !== 0;
  let k = -1;
  if (at && v && !stopped()) {
    const count = at.length;
    if (room > 0) {
      k = (narrow ? lift.compactNonZero16 : lift.compactNonZero)(qAt, flagsAt, n, room, room + 4 * count);
      at.set(new Int32Array(args.memory.buffer, room, k));
      v.set(new Int32Array(args.memory.buffer, room + 4 * count, k));
    } else {
      const buf = args.memory.buffer;
      k = listNonZeros(
        narrow ? new Int16Array(buf, qAt, n) : new Int32Array(buf, qAt, n),
        flagsAt,
        args,
        stopped,
      );
    }
  }
  if (!sums) return k;
  for (let b = 0; b < nb; b++) {
    if (stopped()) return k;
    (narrow ? lift.squaredError16 : lift.squaredError)(
      x,
      qAt,
      width,
      1,
      GEO + 16 * b,
      PAR + 32 * b,
      RESULTS + 8 * b,
    );
  }
  sums.set(new Float64Array(args.memory.buffer, RESULTS, nb));
  sums[nb] = 1;
  return k;
}

/** q's non-zeros in raster order into args.at and args.v, by the chunk flags at `flagsAt`; −1 if stopped or too many. */
function listNonZeros(
  q: Int32Array | Int16Array,
  flagsAt: number,
  args: AsidePieceArgs,
  stopped: () => boolean,
): number {
  const { at, v } = args as Required<AsidePieceArgs>;
  const flags = new Uint8Array(args.memory.buffer, flagsAt, Math.ceil(q.length / CHUNK));
  let k = 0;
  for (let j = 0; j < flags.length; j++) {
    if ((j & 255) === 0 && stopped()) return -1;
    if (!flags[j]) continue;
    const end = Math.min(q.length, (j + 1) * CHUNK);
    for (let i = j * CHUNK; i < end; i++) {
      const value = q[i];
      if (value === 0) continue;
      if (k === at.length) return -1;
      at[k] = i;
      v[k++] = value;
    }
  }
  return k;
}
