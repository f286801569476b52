// First touch of the decoder's planes while sharp decodes (src-main/node/image/prefault.ts): once stop() has
// resolved nothing writes to the planes any more and at most the request in flight was finished; once finish()
// has resolved every page is present, so writing the planes in full takes (almost) no page faults. decodeImage
// touches its planes so only when asked (the single-scan compress), with the same result.
import { describe, expect, it } from 'vitest';
import { decodeImage } from '../../src-main/node/image/decode';
import { planesWhileDecoding } from '../../src-main/node/image/planes-ahead';
import { prefault } from '../../src-main/node/image/prefault';
import { image } from '../helpers/fixtures';

/** Bytes one pool request writes (prefault.ts CHUNK_BYTES). */
const CHUNK = 2 << 20;
/** Linux/x86-64 page size (common practice). */
const PAGE = 4096;

const faults = () => process.resourceUsage().minorPageFault;
const nonZero = (b: Uint8Array) => b.reduce((k, v) => k + (v !== 0 ? 1 : 0), 0);

describe('prefault', () => {
  it('stopped at once, writes at most one request, and nothing after stop() resolves', async () => {
    const plane = new Uint8Array(new SharedArrayBuffer(3 * CHUNK + 100));
    await prefault([plane]).stop();
    expect(nonZero(plane.subarray(CHUNK))).toBe(0);
    plane.fill(7);
    for (let i = 0; i < 5; i++) await new Promise((r) => setTimeout(r, 10));
    expect(plane.every((v) => v === 7)).toBe(true);
  });

  it('finish() leaves every page of every view present: a full write afterwards takes almost no faults', async () => {
    // 12 MiB in views of odd sizes: ~3 000 pages, each a fault on a fresh first write.
    const views = [
      new Float32Array(new SharedArrayBuffer(2 * CHUNK + 3 * PAGE)),
      new Uint8Array(new SharedArrayBuffer(5 * PAGE + 17)),
      new Float32Array(new SharedArrayBuffer(4 * CHUNK)),
    ];
    const pages = views.reduce((k, v) => k + Math.ceil(v.byteLength / PAGE), 0);
    await prefault(views).finish();
    const before = faults();
    for (const v of views) new Uint8Array(v.buffer).fill(1);
    // Other threads of the test process may fault a few pages meanwhile; a missed view or range would add hundreds.
    expect(faults() - before).toBeLessThan(pages / 10);
  });

  it('a fresh write of the same size does take a fault per page (the check above can fail)', () => {
    const plane = new Uint8Array(new SharedArrayBuffer(6 * CHUNK));
    const before = faults();
    plane.fill(1);
    expect(faults() - before).toBeGreaterThan((6 * CHUNK) / PAGE / 2);
  });

  it('takes empty views and no views', async () => {
    await expect(prefault([]).stop()).resolves.toBeUndefined();
    await expect(prefault([new Float32Array(0), new Uint8Array(0)]).finish()).resolves.toBeUndefined();
  });

  it('planesWhileDecoding allocates shared planes of the promised size, or none when it cannot', async () => {
    const held: { planes?: Float32Array[] } = {};
    await planesWhileDecoding(held, { pixels: 1000, channels: 3 }).finish();
    expect(held.planes?.map((p) => [p.length, p.buffer instanceof SharedArrayBuffer])).toEqual([
      [1000, true],
      [1000, true],
      [1000, true],
    ]);
    // More than a SharedArrayBuffer can hold: no planes now, and nothing thrown (the caller allocates later).
    const none: { planes?: Float32Array[] } = {};
    await planesWhileDecoding(none, { pixels: 2 ** 40, channels: 1 }).stop();
    expect(none.planes).toBeUndefined();
  });

  it('decodeImage gives the same shared planes and hash with and without the first touch (option prefault)', async () => {
    for (const name of ['camera.png', 'chessboard_GRAY_U16.tif']) {
      const plain = await decodeImage(image(name));
      const touched = await decodeImage(image(name), { prefault: true });
      expect(touched.sourceSha256).toBe(plain.sourceSha256);
      expect(touched.planes.length).toBe(plain.planes.length);
      touched.planes.forEach((p, c) => {
        expect(p.buffer instanceof SharedArrayBuffer).toBe(true);
        expect(plain.planes[c].buffer instanceof SharedArrayBuffer).toBe(true);
        expect(p).toEqual(plain.planes[c]);
      });
    }
  });
});
