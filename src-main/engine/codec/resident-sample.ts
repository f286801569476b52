/**
 * The rate model's sample (./wavelet-estimate.ts sortedSample: per band, the sorted magnitudes at every
 * stride-th raster position) of a plane whose coefficients are resident in its arena (./wasm/arena.ts),
 * gathered and sorted by the kernel (./wasm/assembly/lifting.ts sortedSample) instead of a typed array's
 * comparison sort: the same lists, value for value (a sorted list of numbers is one list whatever sorts it).
 *
 * Why: the sample is built once per plane, on the encoder's critical path just before the first encode, where
 * the comparison sort of a large plane's ~270 000 magnitudes took ~30 ms and the radix sort takes a few.
 * Its scratch (the list, as much again and the digit counts) is the start of the work region's first touch
 * (arena touchFrom): memory every encode of the plane touches anyway, taken only while nothing in that region
 * is still read ({@link workIdle}).
 */
import { residentArena, workIdle } from './resident-plane';
import type { BandRect } from './wasm/runtime';

/** Bytes of the radix sort's digit counts (6 digits of 11 bits, u32 each). */
const HIST_BYTES = 6 * 2048 * 4;

/** Most samples a w × h band at 1 in `stride` raster positions holds (at most ⌈w/stride⌉ a row). */
const boundOf = (b: BandRect, stride: number) => b.h * Math.ceil(b.w / stride);

/**
 * Per band, the sorted magnitudes of `plane`'s coefficients at the raster positions ≡ 0 (mod stride), from its
 * arena; undefined when it has none or the arena's work region is in use (the caller then sorts them itself).
 */
export function residentSample(
  plane: object,
  bands: readonly BandRect[],
  width: number,
  stride: number,
): Float64Array[] | undefined {
  const arena = residentArena(plane);
  if (!arena || !workIdle(arena)) return undefined;
  const cap = bands.reduce((m, b) => Math.max(m, boundOf(b, stride)), 0);
  const out = Math.ceil(arena.touchFrom / 8) * 8;
  const tmp = out + 8 * cap;
  const hist = tmp + 8 * cap;
  if (hist + HIST_BYTES > arena.endAt) return undefined;
  const { lift, coeffsAt } = arena;
  return bands.map((b) => {
    const k = lift.sortedSample(coeffsAt, width, b.x0, b.y0, b.w, b.h, stride, out, tmp, hist);
    return new Float64Array(arena.memory.buffer, out, k).slice();
  });
}
