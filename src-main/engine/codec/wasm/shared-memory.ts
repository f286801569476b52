/**
 * Shared WebAssembly memories for the plane arenas (./arena.ts), which two threads may work on at once
 * (../arena-split.ts). A page without cross-origin isolation has no SharedArrayBuffer: there every memory is
 * a plain one, and everything runs on the calling thread.
 */

import type { LiftingExports } from './runtime';

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

/** The kernels on each arena memory of this thread (../arena-split.ts), and each memory's number (from 1). */
const local = new WeakMap<WebAssembly.Memory, LiftingExports>();
const ids = new WeakMap<WebAssembly.Memory, number>();
let nextId = 1;

/** Record that `memory` is an arena's own on this thread, with its kernels. */
export function adoptArenaMemory(memory: WebAssembly.Memory, lift: LiftingExports): void {
  local.set(memory, lift);
  if (!ids.has(memory)) ids.set(memory, nextId++);
}

/** The kernels of an arena memory of this thread, or undefined for a memory sent from another thread. */
export function ownKernels(memory: WebAssembly.Memory): LiftingExports | undefined {
  return local.get(memory);
}

/** The number of an arena memory of this thread; 0 for any other memory. */
export function arenaMemoryId(memory: WebAssembly.Memory): number {
  return ids.get(memory) ?? 0;
}
