/**
 * Shared WebAssembly memories for the plane arenas (./arena.ts), which two threads may work on at once
 * (../arena-split.ts). A page without cross-origin isolation has no SharedArrayBuffer: there every memory is
 * a plain one, and everything runs on the calling thread.
 */

/** Most pages a shared memory may grow to (scripts/build.mjs builds the *-shared kernels with this maximum). */
const SHARED_MAX_PAGES = 65536;

/** Whether `memory` is shared (its kernels must be the *-shared builds). */
export function isSharedMemory(memory: WebAssembly.Memory): boolean {
  return typeof SharedArrayBuffer === 'function' && memory.buffer instanceof SharedArrayBuffer;
}

/** A new memory of `pages` pages: shared where the runtime allows it, else plain; null when none can be made. */
export function newArenaMemory(pages: number): WebAssembly.Memory | null {
  if (typeof SharedArrayBuffer === 'function') {
    try {
      return new WebAssembly.Memory({ initial: pages, maximum: SHARED_MAX_PAGES, shared: true });
    } catch {
      // No shared memories here (or not that large): a plain one.
    }
  }
  try {
    return new WebAssembly.Memory({ initial: pages });
  } catch {
    return null;
  }
}
