/**
 * Report thumbnails: the display scale of a pair, checked on PNGs decoded by pngjs 7 (an independent
 * PNG reader, not libvips).
 */
import { PNG } from 'pngjs';
import { describe, expect, it } from 'vitest';
import { displayScale, pairFromSamples, type ThumbSource } from '../../src-main/node/batch/thumbs';

const pngOf = (dataUrl: string) => PNG.sync.read(Buffer.from(dataUrl.split(',')[1], 'base64'));

function chessboard(bitDepth: 8 | 16, high: number, channels = 1): ThumbSource {
  const width = 64;
  const height = 48;
  const plane = new Float32Array(width * height);
  for (let y = 0; y < height; y++)
    for (let x = 0; x < width; x++) plane[y * width + x] = ((x >> 3) + (y >> 3)) % 2 ? high : 0;
  const samples = [plane];
  if (channels === 2) samples.push(new Float32Array(width * height).fill(bitDepth === 16 ? 65535 : 255));
  return { width, height, channels, bitDepth, samples };
}

describe('report thumbnails', () => {
  it('shows 8-bit and full-range 16-bit samples as stored (÷257 for 16-bit)', () => {
    expect(displayScale(chessboard(8, 200)).scale).toBe(1);
    const full = displayScale(chessboard(16, 60000));
    expect(full.scale).toBeCloseTo(1 / 257, 12);
    expect(full.note).toBeUndefined();
  });

  it('stretches a 16-bit scan that uses a few bits, the same for both thumbnails, and says so', async () => {
    // Values 0 and 255 in a 16-bit file: ÷257 would draw the whole pair black.
    const original = chessboard(16, 255);
    const recon = chessboard(16, 250);
    const { scale, note } = displayScale(original);
    expect(scale).toBe(1);
    expect(note).toMatch(/0–255 shown as 0–255/);
    const pair = await pairFromSamples(original, recon);
    const a = pngOf(pair.original!);
    const b = pngOf(pair.reconstruction!);
    const max = (p: PNG) => p.data.reduce((m, v, i) => (i % 4 === 3 ? m : Math.max(m, v)), 0);
    expect(max(a)).toBe(255);
    // Same scale: the reconstruction's 250 stays below the original's white (not re-stretched to 255).
    expect(max(b)).toBeGreaterThanOrEqual(248);
    expect(max(b)).toBeLessThanOrEqual(251);
    expect(pair.note).toBe(note);
  });

  it('ignores the alpha channel when choosing the scale', () => {
    expect(displayScale(chessboard(16, 1000, 2)).scale).toBeCloseTo(255 / 1000, 12);
  });
});
