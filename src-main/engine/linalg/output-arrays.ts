/**
 * f32 output arrays for the factors U and V, reserved and touched ahead of a timed factorisation.
 *
 * A fresh typed array of a few hundred KiB is backed by pages the kernel maps on first write; on the
 * bench VM each first touch cost ≈ 25 µs per 4 KiB page (measured for lowrank/factorise.ts, copyF32), so
 * the 1500×51 U and 2000×51 V of a rank-50 scan (≈ 700 KiB, 175 pages) spent ≈ 4 ms in page faults
 * inside the factorisation. The process set-up (src-main/node/parallel/factor-path.ts) reserves them
 * before the timer; a factorisation takes each reserved array at most once (no two results share
 * memory) and allocates as before when none of its length is waiting.
 */

const reserved: Float32Array[] = [];
/** Elements between writes when touching a reserved array (4 KiB pages of f32). */
const PAGE_ELEMENTS = 1024;

/** Reserve one touched f32 array of each length, replacing earlier reservations. */
export function reserveOutputs(lengths: readonly number[]): void {
  reserved.length = 0;
  for (const len of lengths) {
    const a = new Float32Array(len);
    for (let i = 0; i < len; i += PAGE_ELEMENTS) a[i] = 0;
    reserved.push(a);
  }
}

/** A zero-filled output array of `len` elements: for f32, a reserved one when waiting (taken once), else new. */
export function takeOutput(len: number, f32: boolean): Float32Array | Float64Array {
  if (!f32) return new Float64Array(len);
  const i = reserved.findIndex((a) => a.length === len);
  return i < 0 ? new Float32Array(len) : reserved.splice(i, 1)[0];
}
