// First touch of the decoder's planes on a pool thread (src-main/node/image/prefault.ts): once stop() has
// resolved nothing writes to the planes any more, at most the request in flight is finished, and every page of a
// plane left to run to the end has been written.
import { describe, expect, it } from 'vitest';
import { prefault } from '../../src-main/node/image/prefault';

/** Bytes one request writes (prefault.ts CHUNK_BYTES). */
const CHUNK = 2 << 20;
/** Linux/x86 page size, the unit a first touch works in (common practice). */
const PAGE = 4096;

const tick = () => new Promise((r) => setTimeout(r, 20));
const nonZero = (b: Uint8Array) => b.reduce((k, v) => k + (v !== 0 ? 1 : 0), 0);

describe('prefault', () => {
  it('stopped at once, writes at most one request, and nothing after stop() resolves', async () => {
    const plane = new Uint8Array(new SharedArrayBuffer(3 * CHUNK + 100));
    await prefault([plane]).stop();
    expect(nonZero(plane.subarray(CHUNK))).toBe(0);
    plane.fill(7);
    for (let i = 0; i < 5; i++) await tick();
    expect(plane.every((v) => v === 7)).toBe(true);
  });

  it('left running, writes every page of every view (random bytes: each page holds a non-zero byte)', async () => {
    const views = [new Float32Array(new SharedArrayBuffer(CHUNK + 3 * PAGE)), new Uint8Array(5 * PAGE)];
    const run = prefault(views);
    // One request per 2 MiB chunk: three requests cover both views; waiting for a few timer turns lets them finish.
    let pages = 0;
    for (let turn = 0; turn < 500 && pages < (CHUNK + 3 * PAGE) / PAGE + 5; turn++) {
      await tick();
      pages = 0;
      for (const v of views) {
        const bytes = new Uint8Array(v.buffer, v.byteOffset, v.byteLength);
        for (let p = 0; p < bytes.length; p += PAGE) if (nonZero(bytes.subarray(p, p + PAGE)) > 0) pages++;
      }
    }
    await run.stop();
    expect(pages).toBe((CHUNK + 3 * PAGE) / PAGE + 5);
  });

  it('takes empty views and no views', async () => {
    await expect(prefault([]).stop()).resolves.toBeUndefined();
    await expect(prefault([new Float32Array(0), new Uint8Array(0)]).stop()).resolves.toBeUndefined();
  });
});
