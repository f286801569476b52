// --expand-check's PSNR: 10·log10(MAX²/MSE) (Gonzalez & Woods, Digital Image Processing, 3rd ed., eq. 8.1-10,
// from memory). Textbook value: 8-bit, MSE = 1 → 20·log10(255) = 48.1308 dB.
import { describe, expect, it } from 'vitest';
import { OPTIONS } from '../../src-main/contract';
import { psnrOfPlanes } from '../../src-main/node/batch/check';
import { settingsText } from '../../src-main/node/batch/rows';

describe('psnrOfPlanes', () => {
  it('gives 48.1308 dB for an 8-bit MSE of 1, and 96.3295 dB for 16-bit (MAX 65535)', () => {
    const a = new Float32Array(64).fill(100);
    const b = a.map((v, i) => v + (i % 2 ? 1 : -1));
    expect(psnrOfPlanes([a], [b], 255)).toBeCloseTo(48.1308, 4);
    // 20·log10(65535) = 96.3295 dB at MSE 1.
    expect(psnrOfPlanes([a, a], [b, b], 65535)).toBeCloseTo(96.3295, 4);
    expect(psnrOfPlanes([a], [a], 255)).toBe(Number.POSITIVE_INFINITY);
  });
});

describe('settingsText', () => {
  it('names the budget and tile so --resume can tell runs apart', () => {
    expect(settingsText({ budget: { kind: 'psnr', db: 40 }, tile: 'auto' })).toBe('min-psnr=40 tile=auto');
    expect(settingsText({ budget: { kind: 'bytes', bytes: 250000 }, tile: 64 })).toBe('bytes=250000 tile=64');
    expect(settingsText({ budget: { kind: 'rank', rank: 6 }, tile: 0, page: 2 })).toBe(
      'rank=6 tile=0 page=2',
    );
  });

  it('says lossless for --lossless, so a resumed run is not taken for --min-psnr at the top of its range', () => {
    const top = { kind: 'psnr', db: OPTIONS.minPsnr.max } as const;
    expect(settingsText({ budget: top, tile: 'auto', lossless: true })).toBe('lossless tile=auto');
    expect(settingsText({ budget: top, tile: 'auto' })).toBe(`min-psnr=${OPTIONS.minPsnr.max} tile=auto`);
    expect(settingsText({ budget: { kind: 'bytes', bytes: 9000 }, tile: 0, lossless: true })).toBe(
      'lossless bytes=9000 tile=0',
    );
    expect(settingsText({ budget: { kind: 'bpp', bpp: 1 }, tile: 0, lossless: false })).toBe(
      'bpp=1 lossless=never tile=0',
    );
  });
});
