/**
 * The decoder's shared planes made before sharp has decoded the scan, from the probe's shape, with their first
 * touch started on a pool thread (./prefault.ts).
 */
import { sharedFloat32 } from '../../engine/lowrank/decode-image';
import { type Prefault, prefault } from './prefault';

/**
 * `channels` shared planes of `pixels` samples, kept in `held`, with their first touch started. Planes that cannot
 * be allocated yet are left out (the caller allocates, or fails to, after the decode, as it always did).
 */
export function planesWhileDecoding(
  held: { planes?: Float32Array[] },
  shape: { pixels: number; channels: number },
): Prefault {
  try {
    held.planes = Array.from({ length: shape.channels }, () => sharedFloat32(shape.pixels));
  } catch {
    held.planes = undefined;
  }
  return prefault(held.planes ?? []);
}
