// One thread or two (`compress --workers 1` / `--workers 2`): the same file bit for bit, and the same report
// figures, on grey, colour and 16-bit inputs (issue #12, "Output is bit-identical with 1 or 2 workers"). The
// side thread's jobs (src-main/engine/lowrank/side-jobs.ts) must really run on the worker for this to test
// anything, so the thread is started and loaded before the encode and the jobs it took are counted.
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, describe, expect, it } from 'vitest';
import type { CompressOptions } from '../../src-main/contract';
import { SideThread } from '../../src-main/node/parallel/side-thread';
import { compressFile } from '../../src-main/node/services/compress';
import { image, repoRoot } from '../helpers/fixtures';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-workers-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** 1320×1260 grey (1.66 MP, above the residual-only shortcut's 1.57 MP): camera.png upscaled, plus noise. */
async function greyScan(): Promise<string> {
  const file = join(dir, 'grey.png');
  const { data } = await sharp(image('camera.png'))
    .toColourspace('b-w')
    .extractChannel(0)
    .resize(1320, 1260, { fit: 'fill', kernel: 'lanczos3' })
    .raw()
    .toBuffer({ resolveWithObject: true });
  let s = 8;
  for (let i = 0; i < data.length; i++) {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    data[i] = Math.max(0, Math.min(255, data[i] + ((s >>> 24) % 5) - 2));
  }
  await sharp(data, { raw: { width: 1320, height: 1260, channels: 1 } })
    .png()
    .toFile(file);
  return file;
}

/**
 * 1320×1260 colour (above the residual-only shortcut's 1.57 MP): camera.png as red, moon.png as green and
 * their mean as blue, upscaled, plus the same seeded noise, so the chroma planes carry detail to code.
 */
async function colourScan(): Promise<string> {
  const file = join(dir, 'colour.png');
  const grey = async (name: string) =>
    (
      await sharp(image(name))
        .toColourspace('b-w')
        .extractChannel(0)
        .resize(1320, 1260, { fit: 'fill', kernel: 'lanczos3' })
        .raw()
        .toBuffer({ resolveWithObject: true })
    ).data;
  const [r, g] = [await grey('camera.png'), await grey('moon.png')];
  const rgb = Buffer.alloc(3 * r.length);
  let s = 9;
  for (let i = 0; i < r.length; i++) {
    const px = [r[i], g[i], (r[i] + g[i]) >> 1];
    for (let c = 0; c < 3; c++) {
      s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
      rgb[3 * i + c] = Math.max(0, Math.min(255, px[c] + ((s >>> 24) % 5) - 2));
    }
  }
  await sharp(rgb, { raw: { width: 1320, height: 1260, channels: 3 } })
    .png()
    .toFile(file);
  return file;
}

const sample = (name: string) => join(repoRoot, 'samples', name);

async function both(input: string, options: CompressOptions, tag: string) {
  const one = await compressFile(input, join(dir, `${tag}-1.rkf`), options, { workers: 1 });
  const side = SideThread.start();
  if (!side) throw new Error('dist/workers/side.js is missing: run `npm run build` first');
  await side.ready();
  try {
    const two = await compressFile(input, join(dir, `${tag}-2.rkf`), options, { side });
    return { one, two, taken: side.taken };
  } finally {
    await side.close();
  }
}

describe('compress with one thread and with two', () => {
  const cases: Array<[string, () => Promise<string>, CompressOptions]> = [
    ['grey 8-bit, residual-only shortcut', greyScan, { budget: { kind: 'bpp', bpp: 0.25 }, tile: 'auto' }],
    ['grey 8-bit, PSNR floor', greyScan, { budget: { kind: 'psnr', db: 36 }, tile: 'auto' }],
    // Residual only: the chroma planes are coded on the side thread while the calling thread codes Y.
    ['colour, residual-only shortcut', colourScan, { budget: { kind: 'bpp', bpp: 0.5 }, tile: 'auto' }],
    [
      'colour (samples/colour-slide.png)',
      async () => sample('colour-slide.png'),
      // Base layer, 64-px tiles: the two-layer search on this slide ran past 10 minutes at load 26.
      { budget: { kind: 'bpp', bpp: 0.5 }, tile: 64, layers: 'base' },
    ],
    [
      '16-bit grey (samples/film-plate-16bit.tif)',
      async () => sample('film-plate-16bit.tif'),
      { budget: { kind: 'percent', percent: 3 }, tile: 'auto' },
    ],
  ];
  for (const [what, input, options] of cases)
    it(`${what}: identical bytes and figures, and the worker took jobs`, async () => {
      const tag = what.replace(/\W+/g, '-');
      const { one, two, taken } = await both(await input(), options, tag);
      expect(readFileSync(join(dir, `${tag}-2.rkf`)).equals(readFileSync(join(dir, `${tag}-1.rkf`)))).toBe(
        true,
      );
      expect(two.psnr).toBe(one.psnr);
      expect(two.ssim).toBe(one.ssim);
      expect(two.layers).toEqual(one.layers);
      // Every encode reports SSIM, and the plane's lower half is offered first: the loaded worker takes it.
      expect(taken).toBeGreaterThanOrEqual(1);
    }, 600_000);
});
