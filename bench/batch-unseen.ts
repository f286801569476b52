/**
 * The second folder of the `--total` bench (issue #13, "also checked on a folder you have not seen"): 14 scans
 * that the first folder (bench/batch-total.ts) does not hold. They are cut, turned, rescaled and given seeded
 * grain from the same sources, all already in the repository with their origin and licence:
 * test/fixtures/images (scikit-image 0.19.3 sample data, BSD-3-Clause / public domain: test/fixtures/SOURCES.md)
 * and samples/ (synthetic, MIT: samples/SOURCES.md). Nothing outside the repository is read. The first folder
 * takes every source whole, shrunk to a long side of 512; this one takes full-resolution details, another page
 * of the gel scan, the 16-bit chessboard the first folder leaves out, a grained blank leaf and a collage.
 */
import { mkdir, readdir } from 'node:fs/promises';
import { join } from 'node:path';
import sharp, { type Sharp } from 'sharp';
import { Rng } from '../src-main/engine/linalg/random';

/** 8-bit grey samples of `img` with Gaussian grain of `sigma` levels added (the engine's seeded Rng), as a PNG at `out`. */
async function grained(img: Sharp, sigma: number, seed: number, out: string): Promise<void> {
  const { data, info } = await img.greyscale().raw().toBuffer({ resolveWithObject: true });
  const rng = new Rng(seed);
  const px = Buffer.alloc(info.width * info.height);
  for (let i = 0; i < px.length; i++)
    px[i] = Math.max(0, Math.min(255, Math.round(data[i * info.channels] + sigma * rng.normal())));
  await sharp(px, { raw: { width: info.width, height: info.height, channels: 1 } })
    .toColourspace('b-w')
    .png()
    .toFile(out);
}

const F = 'test/fixtures/images';
const S = 'samples';

/** Write the folder into `dir`; returns its file names. */
export async function unseenFolder(dir: string): Promise<string[]> {
  await mkdir(dir, { recursive: true });
  const at = (name: string) => join(dir, name);
  // Grey sources stay one-channel 8-bit (b-w); the map and the slide stay RGB.
  const png = (s: Sharp, name: string, grey = true) =>
    (grey ? s.toColourspace('b-w') : s).png().toFile(at(name));
  await grained(sharp(`${F}/camera.png`).rotate(90), 6, 1301, at('camera-turned-grain.png'));
  await png(
    sharp(`${F}/moon.png`)
      .extract({ left: 128, top: 128, width: 256, height: 256 })
      .resize(448, 448, { kernel: 'lanczos3' }),
    'moon-detail-enlarged.png',
  );
  await png(sharp(`${F}/page.png`).resize(768, 382, { kernel: 'lanczos3' }), 'page-twice.png');
  await grained(sharp(`${F}/text.png`).flop(), 3, 1302, at('text-mirrored-grain.png'));
  await png(sharp(`${F}/phantom.png`).greyscale().resize(300, 300), 'phantom-grey-small.png');
  await png(
    sharp(`${F}/chessboard_GRAY_U16.tif`).resize(400, 400, { kernel: 'nearest' }).toColourspace('grey16'),
    'chessboard-16bit.png',
    false,
  );
  await png(
    sharp(`${S}/map-sheet.png`).extract({ left: 1000, top: 500, width: 420, height: 420 }).rotate(270),
    'map-detail-turned.png',
    false,
  );
  await png(
    sharp(`${S}/colour-slide.png`).extract({ left: 500, top: 60, width: 480, height: 320 }),
    'slide-sky.png',
    false,
  );
  await png(
    sharp(`${S}/gel-scan.tif`, { page: 1 }).extract({ left: 300, top: 200, width: 500, height: 400 }),
    'gel-long-exposure.png',
  );
  await sharp(`${S}/film-plate-16bit.tif`)
    .extract({ left: 600, top: 700, width: 400, height: 500 })
    .toColourspace('grey16')
    .tiff({ compression: 'deflate' })
    .toFile(at('plate-detail-16bit.tif'));
  await png(
    sharp(`${S}/ledger-page.png`).extract({ left: 300, top: 800, width: 500, height: 400 }),
    'ledger-entries.png',
  );
  await png(
    sharp(`${S}/line-sensor-banding.png`).extract({ left: 700, top: 400, width: 450, height: 350 }).flip(),
    'banded-figure-detail.png',
  );
  // A blank leaf with paper grain: flat 230 with Gaussian grain of 1.5 levels.
  await grained(
    sharp({ create: { width: 400, height: 300, channels: 3, background: { r: 230, g: 230, b: 230 } } }),
    1.5,
    1303,
    at('blank-leaf-grain.png'),
  );
  // A collage: the camera beside the text, each 256 high.
  const text = await sharp(`${F}/text.png`).resize({ height: 256 }).greyscale().png().toBuffer();
  const camera = await sharp(`${F}/camera.png`).resize(256, 256).png().toBuffer();
  const textWidth = (await sharp(text).metadata()).width!;
  await sharp({
    create: { width: 256 + textWidth, height: 256, channels: 3, background: { r: 255, g: 255, b: 255 } },
  })
    .composite([
      { input: camera, left: 0, top: 0 },
      { input: text, left: 256, top: 0 },
    ])
    .removeAlpha()
    .toColourspace('b-w')
    .png()
    .toFile(at('collage-camera-text.png'));
  return (await readdir(dir)).sort();
}
