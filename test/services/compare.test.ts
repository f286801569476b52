// `compress --compare` (src-main/node/services/codec-comparison.ts, issue #12 item 2): each standard codec's
// quality by bisection in at most 8 encodes, the largest file within the byte target, the codecs searched
// in parallel with results independent of the concurrency; and one monotone progress across the whole
// `compress --compare` (progress-spans.ts, issue #14 item 5).
import { describe, expect, it } from 'vitest';
import { decodeImage } from '../../src-main/node/image/decode';
import {
  compareCodecs,
  encodeStandard,
  MAX_ENCODES,
  searchQuality,
} from '../../src-main/node/services/codec-comparison';
import { compressDecoded } from '../../src-main/node/services/compress';
import { ProgressSpans } from '../../src-main/node/services/progress-spans';
import { image } from '../helpers/fixtures';

/** A fake encoder whose file has `size(q)` bytes; counts its calls. */
function fake(size: (q: number) => number) {
  const calls: number[] = [];
  return {
    calls,
    encode: async (q: number) => {
      calls.push(q);
      return Buffer.alloc(size(q));
    },
  };
}

describe('searchQuality: bisection on quality', () => {
  it('finds the largest fitting quality of a monotone size curve in ≤ 8 encodes, for every target', async () => {
    const size = (q: number) => 1000 + 37 * q + ((q * q) >> 2); // strictly increasing in q
    for (let target = 900; target <= size(100) + 10; target += 13) {
      const f = fake(size);
      const r = await searchQuality(target, f.encode);
      expect(f.calls.length, `target ${target}`).toBeLessThanOrEqual(MAX_ENCODES);
      expect(r.trials).toBe(f.calls.length);
      // Brute force over all 100 qualities: the largest file ≤ target.
      let want = 0;
      for (let q = 1; q <= 100; q++) if (size(q) <= target) want = q;
      if (want === 0) {
        expect(r.fits).toBe(false);
        expect(r.q).toBe(1);
      } else {
        expect(r.fits).toBe(true);
        expect(r.q).toBe(want);
        expect(r.buf.length).toBeLessThanOrEqual(target);
      }
    }
  });

  it('never returns a smaller file than a fitting one it already encoded (non-monotone sizes)', async () => {
    // q = 51 (the first trial) fits with 1900 bytes, q = 76 (the second) fits with only 1200 and every other
    // quality above 51 is over: the bracket ends at 76, but the largest fitting file is q = 51's.
    const size = (q: number) => (q === 51 ? 1900 : q === 76 ? 1200 : q > 51 ? 5000 : 1000 + 10 * q);
    const f = fake(size);
    const r = await searchQuality(2000, f.encode);
    expect(f.calls.length).toBeLessThanOrEqual(MAX_ENCODES);
    expect(f.calls.slice(0, 2)).toEqual([51, 76]);
    expect(r.q).toBe(51);
    const fitting = f.calls.map(size).filter((b) => b <= 2000);
    expect(r.buf.length).toBe(Math.max(...fitting));
  });
});

describe('compareCodecs', () => {
  it('≤ 8 real encodes per codec, files ≤ the target, the same results at concurrency 1 and 3', async () => {
    const d = await decodeImage(image('camera.png'));
    const target = 12_000;
    const counted = (log: Record<string, number>): typeof encodeStandard => {
      return async (raw, w, h, nc, codec, q) => {
        log[codec] = (log[codec] ?? 0) + 1;
        return encodeStandard(raw, w, h, nc, codec, q);
      };
    };
    const n1: Record<string, number> = {};
    const n3: Record<string, number> = {};
    const fractions: number[] = [];
    const serial = await compareCodecs(d, target, undefined, { encode: counted(n1), concurrency: 1 });
    const parallel = await compareCodecs(d, target, undefined, {
      encode: counted(n3),
      concurrency: 3,
      onProgress: (f) => fractions.push(f),
    });
    expect(parallel).toEqual(serial);
    expect(serial.map((c) => c.codec)).toEqual(['jpeg', 'webp', 'avif']);
    for (const c of serial) {
      expect(n1[c.codec], c.codec).toBeLessThanOrEqual(MAX_ENCODES);
      expect(n3[c.codec]).toBe(n1[c.codec]);
      expect(c.fits, c.codec).toBe(true);
      expect(c.bytes, c.codec).toBeLessThanOrEqual(target);
      // The next quality up is over the target (so this is the largest file the search could find).
      if (c.quality < 100) {
        const up = await encodeStandard(
          Uint8Array.from(d.planes[0]),
          d.width,
          d.height,
          1,
          c.codec,
          c.quality + 1,
        );
        expect(up.length, c.codec).toBeGreaterThan(target);
      }
    }
    for (let i = 1; i < fractions.length; i++) expect(fractions[i]).toBeGreaterThanOrEqual(fractions[i - 1]);
    expect(fractions.at(-1)).toBe(1);
  });
});

describe('one monotone progress', () => {
  it('ProgressSpans maps parts onto the whole, never goes back, and says done only at the end', () => {
    const seen: { stage: string; fraction: number }[] = [];
    const spans = new ProgressSpans((p) => seen.push(p));
    const a = spans.part(0, 0.6, 'encoded');
    const b = spans.part(0.6, 1, 'compared');
    a('factor', 0.5);
    a('layers', 0.4); // an encoder stage that steps back
    a('done', 1);
    b('compare', 0);
    b('compare', 0.5);
    b('done', 1);
    expect(seen.map((p) => p.fraction)).toEqual([0.3, 0.3, 0.6, 0.6, 0.8, 1]);
    expect(seen.map((p) => p.stage)).toEqual(['factor', 'layers', 'encoded', 'compare', 'compare', 'done']);
  });

  it('compress --compare: fractions never decrease, and "done" comes once, last, at 100 %', async () => {
    const d = await decodeImage(image('camera.png'));
    const seen: { stage: string; fraction: number }[] = [];
    await compressDecoded(
      d,
      { budget: { kind: 'bytes', bytes: 12_000 }, tile: 'auto', compare: true },
      { onProgress: (p) => seen.push(p) },
    );
    for (let i = 1; i < seen.length; i++)
      expect(seen[i].fraction).toBeGreaterThanOrEqual(seen[i - 1].fraction);
    expect(seen.filter((p) => p.stage === 'done')).toEqual([{ stage: 'done', fraction: 1 }]);
    expect(seen.at(-1)).toEqual({ stage: 'done', fraction: 1 });
    expect(seen.some((p) => p.stage === 'compare')).toBe(true);
  });
});
