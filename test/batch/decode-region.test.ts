// image/decode.ts `region` (sharp extract after EXIF orientation) gives exactly the samples of cropping the whole
// decoded scan, and the survey's mosaic read band by band equals the mosaic cut from the whole scan.
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { readMosaic, surveyMosaic } from '../../src-main/node/batch/survey';
import { decodeImage } from '../../src-main/node/image/decode';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-region-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** Samples of a `w`×`h` pattern with no two rows or columns alike. */
function pattern(w: number, h: number, channels: number, scale: number): number[] {
  const v: number[] = [];
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++)
      for (let c = 0; c < channels; c++) v.push(((x * 7 + y * 13 + c * 29) * scale) % (256 * scale));
  return v;
}

/** Plane `c` of `img` cropped to the rectangle, row by row. */
function crop(img: DecodedImage, c: number, r: { left: number; top: number; width: number; height: number }) {
  const out: number[] = [];
  for (let y = r.top; y < r.top + r.height; y++)
    out.push(...img.planes[c].subarray(y * img.width + r.left, y * img.width + r.left + r.width));
  return out;
}

async function expectSameAsCrop(
  file: string,
  r: { left: number; top: number; width: number; height: number },
) {
  const whole = await decodeImage(file);
  const part = await decodeImage(file, { region: r });
  expect([part.width, part.height, part.channels, part.bitDepth]).toEqual([
    r.width,
    r.height,
    whole.channels,
    whole.bitDepth,
  ]);
  for (let c = 0; c < whole.channels; c++) expect(Array.from(part.planes[c])).toEqual(crop(whole, c, r));
}

describe('decode region', () => {
  const r = { left: 37, top: 21, width: 50, height: 33 };

  it('equals the crop of the whole decode: 8-bit RGB PNG and 16-bit grey TIFF', async () => {
    const png = join(dir, 'rgb.png');
    await sharp(Buffer.from(pattern(160, 90, 3, 1)), { raw: { width: 160, height: 90, channels: 3 } })
      .png()
      .toFile(png);
    await expectSameAsCrop(png, r);
    const tif = join(dir, 'grey16.tif');
    await sharp(new Uint16Array(pattern(160, 90, 1, 256)), { raw: { width: 160, height: 90, channels: 1 } })
      .toColourspace('grey16')
      .tiff()
      .toFile(tif);
    await expectSameAsCrop(tif, r);
  });

  it('counts in upright pixels on a scan with EXIF orientation 6 (rotated a quarter turn)', async () => {
    const jpg = join(dir, 'turned.jpg');
    await sharp(Buffer.from(pattern(160, 90, 1, 1)), { raw: { width: 160, height: 90, channels: 1 } })
      .jpeg({ quality: 95 })
      .withMetadata({ orientation: 6 })
      .toFile(jpg);
    const whole = await decodeImage(jpg);
    expect([whole.width, whole.height]).toEqual([90, 160]);
    await expectSameAsCrop(jpg, { left: 10, top: 100, width: 70, height: 40 });
  });

  it('refuses a rectangle outside the scan', async () => {
    const png = join(dir, 'rgb.png');
    await expect(decodeImage(png, { region: { left: 150, top: 0, width: 20, height: 5 } })).rejects.toThrow(
      /region\.width/,
    );
  });

  it('the mosaic read band by band equals the mosaic cut from the whole scan', async () => {
    const png = join(dir, 'page.png');
    await sharp(Buffer.from(pattern(700, 520, 1, 1)), { raw: { width: 700, height: 520, channels: 1 } })
      .png()
      .toFile(png);
    const whole = await decodeImage(png);
    const cut = surveyMosaic(whole, 64);
    const read = await readMosaic(700, 520, 64, (region) => decodeImage(png, { region }));
    expect(cut.width).toBe(128);
    expect(read).toBeDefined();
    expect([read!.width, read!.height, read!.rawBytes]).toEqual([cut.width, cut.height, cut.rawBytes]);
    expect(Array.from(read!.planes[0])).toEqual(Array.from(cut.planes[0]));
    expect(await readMosaic(96, 64, 64, () => Promise.reject(new Error('not read')))).toBeUndefined();
  });
});
