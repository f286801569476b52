/**
 * libvips keeps one thread pool per process: `sharp.concurrency(n)` sets it for every pipeline on every
 * thread, the app's interactive decodes included. A caller that needs its own setting for a while (a batch
 * runs libvips on one thread per job) takes it here; the setting the process had before comes back when the
 * last such caller is done, so nothing that runs afterwards inherits it.
 */
import sharp from 'sharp';

let holders = 0;
let before = 0;

/** Run `fn` with libvips on `threads` threads (undefined: leave the setting alone), then restore it. */
export async function withLibvipsThreads<T>(threads: number | undefined, fn: () => Promise<T>): Promise<T> {
  if (threads === undefined) return fn();
  if (holders++ === 0) before = sharp.concurrency();
  sharp.concurrency(threads);
  try {
    return await fn();
  } finally {
    if (--holders === 0) sharp.concurrency(before);
  }
}
