#!/usr/bin/env node
// A 2000×1500 grey scan with spatially correlated noise, for timing the coarse-scale pass of
// `clean --noise auto` (engine/clean/pyramid.ts) against a build of main:
//   node bench/correlated-scan.mjs OUT.png [sigma=10] [seed=11]
// Content: test/fixtures/images camera.png and moon.png (Lanczos-3 to 1000×1000) side by side, above page.png
// (Lanczos-3 to 2000×1092, first 500 rows). Noise: white N(0, 1) through the bench's 3×3 binomial kernel
// [1 2 1]ᵀ[1 2 1]/16 (test/clean/correlated-noise.ts BINOMIAL_3), scaled to σ per pixel after filtering,
// added, rounded and clipped to 8 bits. Seeded, so the same arguments give the same file.
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';
import { rng } from '../samples/generate.mjs';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const fixtures = join(root, 'test', 'fixtures', 'images');
const [out, sigmaArg = '10', seedArg = '11'] = process.argv.slice(2);
if (!out) {
  console.error('usage: node bench/correlated-scan.mjs OUT.png [sigma=10] [seed=11]');
  process.exit(2);
}
const W = 2000;
const H = 1500;
const sigma = Number(sigmaArg);
const seed = Number(seedArg);

/** Grey samples of `file` resized to w × h with Lanczos-3. */
async function resized(file, w, h) {
  const { data } = await sharp(file)
    .greyscale()
    .resize(w, h, { fit: 'fill', kernel: 'lanczos3' })
    .raw()
    .toBuffer({ resolveWithObject: true });
  return data;
}

const cam = await resized(join(fixtures, 'camera.png'), 1000, 1000);
const moon = await resized(join(fixtures, 'moon.png'), 1000, 1000);
const page = await resized(join(fixtures, 'page.png'), W, 1092);
const clean = new Float64Array(W * H);
for (let y = 0; y < 1000; y++)
  for (let x = 0; x < 1000; x++) {
    clean[y * W + x] = cam[y * 1000 + x];
    clean[y * W + 1000 + x] = moon[y * 1000 + x];
  }
for (let i = 0; i < W * 500; i++) clean[1000 * W + i] = page[i];

// Binomial [1 2 1]/4 along both axes over a field 2 samples larger, so every pixel sees the whole kernel.
const g = [0.25, 0.5, 0.25];
const next = rng(seed).gauss;
const FW = W + 2;
const white = Float64Array.from({ length: FW * (H + 2) }, () => next());
const rows = new Float64Array(FW * H);
for (let y = 0; y < H; y++)
  for (let x = 0; x < FW; x++)
    rows[y * FW + x] =
      g[0] * white[y * FW + x] + g[1] * white[(y + 1) * FW + x] + g[2] * white[(y + 2) * FW + x];
const scale = sigma / Math.sqrt(g.reduce((s, v) => s + v * v, 0) ** 2);
const pixels = Buffer.alloc(W * H);
for (let y = 0; y < H; y++)
  for (let x = 0; x < W; x++) {
    const r = y * FW + x;
    const n = (g[0] * rows[r] + g[1] * rows[r + 1] + g[2] * rows[r + 2]) * scale;
    pixels[y * W + x] = Math.min(255, Math.max(0, Math.round(clean[y * W + x] + n)));
  }
await sharp(pixels, { raw: { width: W, height: H, channels: 1 } })
  .toColourspace('b-w')
  .png()
  .toFile(out);
console.log(`${out}: ${W}×${H} grey, binomial 3×3 noise σ ${sigma}, seed ${seed}`);
