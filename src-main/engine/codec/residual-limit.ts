/** The largest scan a residual layer may cover (./image-file.ts), in a module of its own with no code behind it. */

/**
 * Largest scan (pixels) that may carry a residual layer: the decoder holds each coded plane's residual as
 * one float64 plane, so above this (the large-scan encoder's threshold, 2^25) files are base-only.
 */
export const RESIDUAL_MAX_PIXELS = 1 << 25;
