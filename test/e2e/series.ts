/** A small frame series for the stack suites, written as 8-bit grey PNGs with sharp. */
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import sharp from 'sharp';

/**
 * A fictional Fenwick Lab plate: a slow gradient that fades, and a bright spot drifting right, as
 * `frame-1.png` … `frame-N.png` (w×h px) in a new folder `dir`.
 */
export async function writePlateSeries(dir: string, w: number, h: number, n: number): Promise<void> {
  mkdirSync(dir);
  for (let j = 0; j < n; j++) {
    const px = new Uint8Array(w * h);
    for (let y = 0; y < h; y++)
      for (let x = 0; x < w; x++) {
        const base = 40 + (120 * x) / w + (40 * y) / h - 4 * j;
        const dx = x - (10 + 6 * j);
        const dy = y - 24;
        const spot = 90 * Math.exp(-(dx * dx + dy * dy) / 18);
        px[y * w + x] = Math.max(0, Math.min(255, Math.round(base + spot)));
      }
    await sharp(px, { raw: { width: w, height: h, channels: 1 } })
      .toColourspace('b-w')
      .png()
      .toFile(join(dir, `frame-${j + 1}.png`));
  }
}
