/**
 * The size of a plane arena's memory (./arena.ts) and where its coefficients lie, with no kernel behind them:
 * the CLI's launcher (../../../node/cli/early-arena.ts) makes a whole plane's arena memory from a PNG header
 * before the rest of the program has loaded, so this module stays free of the kernels' code.
 */

/** Bytes in a WebAssembly page. */
export const PAGE = 65536;
/** Most memory a 32-bit module addresses, less a page. */
export const MAX_BYTES = 4 * 2 ** 30 - PAGE;
/** Start of the plane's arrays: past the lifting tables (page 0) and the coder's scratch (page 1). */
export const BASE = 2 * PAGE;
/** The kernels' column strip width (assembly/lifting.ts STRIP). */
export const STRIP = 32;
/** q entries per chunk of the kernel's non-zero map (assembly/lifting.ts CHUNK_BITS, CHUNK). */
export const CHUNK_BITS = 10;
export const CHUNK = 1 << CHUNK_BITS;

export const align16 = (n: number) => (n + 15) & ~15;

/**
 * Bytes of a width×height plane's arena memory (the layout of ./arena.ts PlaneArena); undefined when it would
 * pass what a 32-bit module addresses.
 */
export function arenaBytes(width: number, height: number): number | undefined {
  const n = width * height;
  const scratch = 2 * (align16(16 * Math.max(width, height)) + align16(8 * STRIP * height));
  const bytes = BASE + align16(8 * n) + scratch + align16(Math.ceil(n / CHUNK)) + align16(8 * n) + PAGE;
  return bytes > MAX_BYTES ? undefined : bytes;
}
