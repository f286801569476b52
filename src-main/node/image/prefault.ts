/**
 * First touch of freshly allocated planes on a libuv pool thread, while the main thread waits for sharp.
 *
 * A new 33 MB plane costs about 8 000 page faults on its first write (about 11 µs each on the 2-core VM of
 * issue #12: ~90 ms). `crypto.randomFill` writes the planes from a pool thread, so the faults are taken there
 * and the main thread's later write (the deinterleave, which overwrites every sample) finds the pages present.
 * A kernel-side write does not do the job: after reading /dev/zero (or a file) into the planes, the first write
 * from JavaScript still took 120–170 ms for 33 MB with no page faults counted (Linux 6.18 guest, measured), while
 * after randomFill it took 13 ms, as on pages JavaScript had written itself.
 *
 * The planes' contents are meaningless afterwards: only for planes that are then overwritten in full. Nothing
 * else may write to them until `stop()` or `finish()` has resolved.
 */
import { randomFill } from 'node:crypto';
import { setImmediate as nextTurn } from 'node:timers/promises';

/** Bytes written per request: small enough that `stop()` waits at most one request (~6 ms at 11 µs per 4 KiB page). */
const CHUNK_BYTES = 2 << 20;
/** The smallest page size of the platforms Rankfold runs on (4 KiB: x86-64, and arm64 Linux by default). */
const PAGE_BYTES = 4096;
/** Pages `finish()` touches on the calling thread between two turns of the event loop (~3 ms of faults). */
const SLICE_PAGES = 256;

/** A running first touch. */
export interface Prefault {
  /** End it after the request in flight; resolves once nothing writes any more. */
  stop(): Promise<void>;
  /**
   * Touch what is left from the far end on the calling thread while the pool thread goes on from the front (the
   * caller now needs the pages, and both cores can help); resolves once every page is touched and nothing writes.
   */
  finish(): Promise<void>;
}

/**
 * Start touching the pages of `views`, one chunk at a time on one pool thread (so it takes at most one core
 * beside sharp's decode). Never rejects: any failure just ends the touching early. Each next chunk is asked for
 * from this thread's event loop: `firstBytes` (for the first request only) larger than a chunk for a touch that
 * must go on while this thread runs long synchronous work (stop() may then wait for that request).
 */
export function prefault(views: readonly ArrayBufferView[], firstBytes = CHUNK_BYTES): Prefault {
  let stopped = false;
  // The pool thread's position: views before `view` and bytes before `offset` in it are touched or in flight.
  let view = 0;
  let offset = 0;
  const done = new Promise<void>((resolve) => {
    const step = (): void => {
      while (view < views.length && offset >= views[view].byteLength) {
        view++;
        offset = 0;
      }
      if (stopped || view >= views.length) {
        resolve();
        return;
      }
      const v = views[view];
      const length = Math.min(view === 0 && offset === 0 ? firstBytes : CHUNK_BYTES, v.byteLength - offset);
      const target = new Uint8Array(v.buffer, v.byteOffset + offset, length);
      offset += length;
      randomFill(target, (err) => {
        if (err) stopped = true;
        step();
      });
    };
    step();
  });
  const stop = () => {
    stopped = true;
    return done;
  };
  const finish = async () => {
    // The calling thread's position: bytes from `end` on in view `last` (and views after it) are touched.
    for (let last = views.length - 1; last >= 0; last--) {
      const v = views[last];
      const bytes = new Uint8Array(v.buffer, v.byteOffset, v.byteLength);
      let end = bytes.length;
      const ahead = () => last > view || (last === view && end > offset);
      while (ahead()) {
        const from = Math.max(last === view ? offset : 0, end - SLICE_PAGES * PAGE_BYTES);
        for (let p = end - 1; p >= from; p -= PAGE_BYTES) bytes[p] = 0;
        end = from;
        if (ahead()) await nextTurn();
      }
      if (last <= view) break;
    }
    return stop();
  };
  return { stop, finish };
}
