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
 * else may write to them until `stop()` has resolved.
 */
import { randomFill } from 'node:crypto';

/** Bytes written per request: small enough that `stop()` waits at most one request (~6 ms at 11 µs per 4 KiB page). */
const CHUNK_BYTES = 2 << 20;

/** A running first touch: `stop()` ends it after the request in flight and resolves once nothing writes any more. */
export interface Prefault {
  stop(): Promise<void>;
}

/**
 * Start touching the pages of `views`, one chunk at a time on one pool thread (so it takes at most one core
 * beside sharp's decode). Never rejects: any failure just ends the touching early.
 */
export function prefault(views: readonly ArrayBufferView[]): Prefault {
  let stopped = false;
  const done = new Promise<void>((resolve) => {
    let view = 0;
    let offset = 0;
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
      const length = Math.min(CHUNK_BYTES, v.byteLength - offset);
      randomFill(new Uint8Array(v.buffer, v.byteOffset + offset, length), (err) => {
        if (err) resolve();
        else {
          offset += length;
          step();
        }
      });
    };
    step();
  });
  return {
    stop() {
      stopped = true;
      return done;
    },
  };
}
