/**
 * While a `--total` batch encodes (src-main/node/batch/allot.ts): bytes a file leaves unused go to the files
 * not yet started, and whatever order files finish in, the caps handed out never sum above the total.
 * And the survey's mosaic (survey.ts) takes whole crops from a grid spread over the scan.
 */
import { describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { allocate } from '../../src-main/node/batch/allocate';
import { LiveAllotter } from '../../src-main/node/batch/allot';
import { rateCurve } from '../../src-main/node/batch/rate-curve';
import { surveyMosaic } from '../../src-main/node/batch/survey';

/** PSNR = a + 4·ln(bytes), measured from 1 kB to 1 MB. */
const law = (a: number) =>
  rateCurve([1e3, 1e4, 1e5, 1e6].map((r) => ({ bytes: r, psnr: a + 4 * Math.log(r) })));

describe('LiveAllotter', () => {
  const names = ['a', 'b', 'c', 'd', 'e', 'f'];
  const curves = new Map(names.map((n, i) => [n, law(-3 * i)]));
  const total = 300_000;

  it('gives the bytes a file did not use to the files after it, and never hands out more than the total', () => {
    const first = allocate([...curves.values()], total)!;
    const live = new LiveAllotter(curves, total, 'floor', undefined, first);
    let handedOut = 0;
    let written = 0;
    const floors: number[] = [];
    for (const n of names) {
      const cap = live.take(n);
      handedOut += cap.bytes;
      floors.push(cap.floor);
      // What is on disk plus the cap of the file now running never exceeds the total.
      expect(written + cap.bytes).toBeLessThanOrEqual(total);
      // Every file comes out at 60 % of its cap: the rest is free for the others.
      const actual = Math.floor(cap.bytes * 0.6);
      written += actual;
      live.settle(n, cap.bytes, actual);
    }
    // The floor rises as savings come back (re-planned after each file here: fewer than 100 files left).
    for (let i = 1; i < floors.length; i++) expect(floors[i]).toBeGreaterThan(floors[i - 1]);
    // Caps handed out exceed the total only by bytes that came back unused, never by more.
    expect(handedOut - total).toBeLessThanOrEqual(handedOut - written);
  });

  it('with files at their caps, hands out exactly the first plan', () => {
    const first = allocate([...curves.values()], total)!;
    const live = new LiveAllotter(curves, total, 'floor', undefined, first);
    const caps = names.map((n) => {
      const c = live.take(n);
      live.settle(n, c.bytes, c.bytes);
      return c.bytes;
    });
    expect(caps).toEqual(first.bytes);
    expect(caps.reduce((s, x) => s + x, 0)).toBeLessThanOrEqual(total);
  });
});

describe('surveyMosaic', () => {
  const scan = (w: number, h: number): DecodedImage => {
    const plane = new Float32Array(w * h);
    for (let i = 0; i < plane.length; i++) plane[i] = i % 65521;
    return {
      file: 's.png',
      width: w,
      height: h,
      channels: 1,
      bitDepth: 16,
      colour: 'gray',
      hasAlpha: false,
      planes: [plane],
      meta: { format: 'png' },
      inputBytes: 0,
      rawBytes: w * h * 2,
      sourceSha256: '',
    };
  };

  it('takes 4×4 crops of 64 from a 2048×1536 scan, each copied from the middle of its grid cell', () => {
    const img = scan(2048, 1536);
    const m = surveyMosaic(img, 64);
    expect([m.width, m.height]).toEqual([256, 256]);
    expect(m.rawBytes).toBe(256 * 256 * 2);
    // Crop (gx=1, gy=2): centre of cell (1.5·2048/4, 2.5·1536/4) = (768, 960), so its corner is (736, 928).
    expect(m.planes[0][2 * 64 * 256 + 64]).toBe(img.planes[0][928 * 2048 + 736]);
  });

  it('takes at least 2×2 crops from a small scan, and the whole scan when it cannot hold them', () => {
    expect(surveyMosaic(scan(512, 384), 64).width).toBe(128);
    const tiny = scan(96, 64);
    expect(surveyMosaic(tiny, 64)).toBe(tiny);
  });
});
