/**
 * The report's decode of a grey residual-only file (../lowrank/decode-image) where its residual plane is a
 * reconstruction handed out in its own arena (./resident-plane reconstructResident): each band's samples
 * (the base value plus the residual, rounded and clamped) and their squared errors against the source, in one
 * kernel pass over the plane's memory (./wasm/assembly/lifting.ts greyFlatRows) instead of two loops here.
 * The source's rows are copied into this thread's transform scratch of the arena (warm memory; the transforms
 * are done by then) and the decoded rows copied out of it, a scratch-full at a time.
 *
 * Why: on the machines this runs on these two loops cost about 16 ns a sample in JavaScript, on the thread
 * that waits for nothing else at the end of an encode; the kernel does the same operations in the same order
 * (so the same samples and the same sums, bit for bit) in a fraction of that.
 */
import type { ExactF32Samples } from '../../contract';
import { handOutArena } from './resident-plane';

/**
 * Squared errors summed as ../lowrank/band-sums.ts sums them: `running`, one sum in sample order; `block`,
 * the sum of the open block of samples (`inBlock` of them, blocks counted from the plane's first sample),
 * `sum` the closed blocks' sums added in order; `same` until a sample differs from the source's.
 */
export interface SquareSums {
  running: number;
  block: number;
  sum: number;
  inBlock: number;
  same: boolean;
}

/** Bytes at the scratch's start for the sums (5 f64), before the rows. */
const STATE_BYTES = 64;

/**
 * out[outAt + i] = clamp(round(base + x[at + i])) for i < len (as ../lowrank/decode-image greyFlatInto
 * writes them), and Σ(source[at + i] − out[outAt + i])² added to `sums` in blocks of `block` samples (as
 * ../lowrank/band-sums.ts adds them), when `x` is a resident hand-out; false (nothing done) otherwise.
 */
export function greyFlatResident(
  x: Float64Array,
  base: number,
  at: number,
  len: number,
  max: number,
  source: ExactF32Samples,
  sums: SquareSums,
  block: number,
  out: Float32Array,
  outAt: number,
): boolean {
  const arena = handOutArena(x);
  if (!arena || arena.isReleased) return false;
  const buf = arena.memory.buffer;
  const st = arena.tmpAt;
  const from = st + STATE_BYTES;
  // This thread's tmp and column strip (./wasm/arena.ts): the source's f32 rows, then the decoded ones.
  const cap = Math.floor((arena.sideTmpAt - from) / 8);
  const state = new Float64Array(buf, st, 5);
  state[0] = sums.block;
  state[1] = sums.running;
  state[2] = sums.sum;
  state[3] = sums.inBlock;
  state[4] = 0;
  for (let i = 0; i < len; i += cap) {
    const m = Math.min(cap, len - i);
    const rows = from + 4 * m;
    new Float32Array(buf, from, m).set(source.subarray(at + i, at + i + m));
    arena.lift.greyFlatRows(x.byteOffset + 8 * (at + i), from, rows, m, base, max, block, st);
    out.set(new Float32Array(buf, rows, m), outAt + i);
  }
  sums.block = state[0];
  sums.running = state[1];
  sums.sum = state[2];
  sums.inBlock = state[3];
  if (state[4] !== 0) sums.same = false;
  return true;
}
