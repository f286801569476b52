/** The dead-zone quantiser's per-band steps, shared by the plane coder (./wavelet-plane) and its estimates. */
import type { Band } from './wavelet-transform';

/** Dead-zone rounding offset: q = sign(c)·⌊|c|/Δ + ρ⌋. 0.5 is plain rounding; less widens the zero bin. */
export const DEAD_ZONE_RHO = 0.38;

/** Per-band quantiser steps for pixel-domain step `step`: Δ_b = step / √gain_b. */
export function bandSteps(bands: Band[], step: number): Float64Array {
  return Float64Array.from(bands, (b) => step / Math.sqrt(b.gain));
}
