import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PNG } from 'pngjs';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEFAULT_PIXEL_LIMIT, decodeImage, hashSamples, probeImage } from '../../src-main/node/image/decode';
import { encodeImageBuffer } from '../../src-main/node/image/encode';
import { sniffFormat } from '../../src-main/node/image/open-file';
import { toUpright } from '../../src-main/node/image/orientation';
import { image } from '../helpers/fixtures';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-decode-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

const ramp = (w: number, h: number, scale = 1) =>
  Uint8Array.from({ length: w * h }, (_, i) => ((i * 7) % 251) * scale);

describe('decodeImage on the open test images (test/fixtures/images/SOURCES.md)', () => {
  it('camera.png: 512×512 8-bit gray, samples equal pngjs 7.0.0', async () => {
    const img = await decodeImage(image('camera.png'));
    expect([img.width, img.height, img.channels, img.bitDepth, img.colour, img.hasAlpha]).toEqual([
      512,
      512,
      1,
      8,
      'gray',
      false,
    ]);
    const png = PNG.sync.read(await readFile(image('camera.png')));
    for (let i = 0; i < 512 * 512; i += 997) expect(img.planes[0][i]).toBe(png.data[4 * i]);
    expect(img.sourceSha256).toBe(hashSamples(img.planes, 8));
  });

  it('page.png pixel SHA-256 equals rank_approx_images.json (skimage.io.imread, row-major uint8)', async () => {
    const img = await decodeImage(image('page.png'));
    expect(img.sourceSha256).toBe('667bfd85aab58052ae90251fae1a265cf8be6d1097b1e61dcfc183b65887a1fe');
  });

  it('chessboard_GRAY_U16.tif: 16-bit stays 16-bit (values above 255 survive)', async () => {
    const img = await decodeImage(image('chessboard_GRAY_U16.tif'));
    expect(img.bitDepth).toBe(16);
    expect(img.channels).toBe(1);
    expect(img.rawBytes).toBe(img.width * img.height * 2);
  });

  it('a 16-bit gray TIFF written by sharp directly keeps values up to 65535 exactly', async () => {
    const u16 = Uint16Array.from({ length: 30 * 20 }, (_, i) => (i * 2749) % 65536);
    const file = join(dir, 'deep.tif');
    await writeFile(
      file,
      await sharp(u16, { raw: { width: 30, height: 20, channels: 1 } })
        .toColourspace('grey16')
        .tiff({ compression: 'lzw' })
        .toBuffer(),
    );
    const img = await decodeImage(file);
    expect(img.bitDepth).toBe(16);
    expect(Array.from(img.planes[0])).toEqual(Array.from(u16));
    expect(Math.max(...img.planes[0])).toBeGreaterThan(60000);
  });
});

describe('decodeImage features', () => {
  it('applies EXIF orientation 6 of a JPEG written by sharp: upright size swaps and pixels equal the rotated stored decode', async () => {
    const w = 40;
    const h = 24;
    const file = join(dir, 'orient6.jpg');
    await writeFile(
      file,
      await sharp(ramp(w, h), { raw: { width: w, height: h, channels: 1 } })
        .withMetadata({ orientation: 6 })
        .jpeg({ quality: 95 })
        .toBuffer(),
    );
    const img = await decodeImage(file);
    expect([img.width, img.height, img.meta.orientation, img.meta.format]).toEqual([h, w, 6, 'jpeg']);
    // Same decoder without rotation, then the CIPA DC-008 orientation-6 transform.
    const stored = await sharp(file).toColourspace('b-w').raw().toBuffer({ resolveWithObject: true });
    expect([stored.info.width, stored.info.height]).toEqual([w, h]);
    const up = toUpright(Uint8Array.from(stored.data), w, h, 6);
    expect(Array.from(img.planes[0])).toEqual(Array.from(up.plane));
  });

  it('keeps alpha as its own plane (8-bit gray+alpha and RGBA)', async () => {
    const n = 6 * 4;
    const y = Float32Array.from({ length: n }, (_, i) => i * 10);
    const a = Float32Array.from({ length: n }, (_, i) => 255 - i * 3);
    for (const ch of [2, 4] as const) {
      const planes = ch === 2 ? [y, a] : [y, y.map((v) => 255 - v), y.map((v) => v / 2), a];
      const file = join(dir, `alpha${ch}.png`);
      await writeFile(
        file,
        await encodeImageBuffer(
          { width: 6, height: 4, channels: ch, bitDepth: 8, planes },
          { format: 'png' },
        ),
      );
      const img = await decodeImage(file);
      expect(img.channels).toBe(ch);
      expect(img.hasAlpha).toBe(true);
      expect(Array.from(img.planes[ch - 1])).toEqual(Array.from(a));
    }
  });

  it('reads page N of a multi-page TIFF, and says which pages exist', async () => {
    const w = 8;
    const h = 6;
    const px = Uint8Array.from({ length: w * h * 3 }, (_, i) => Math.floor(i / (w * h)) * 80 + (i % 7));
    const file = join(dir, 'pages.tif');
    await writeFile(
      file,
      await sharp(px, { raw: { width: w, height: h * 3, channels: 1, pageHeight: h } })
        .toColourspace('b-w')
        .tiff({ compression: 'deflate' })
        .toBuffer(),
    );
    const p2 = await decodeImage(file, { page: 2 });
    expect([p2.width, p2.height, p2.meta.pages, p2.meta.page]).toEqual([w, h, 3, 2]);
    expect(Array.from(p2.planes[0])).toEqual(Array.from(px.subarray(2 * w * h)));
    const p0 = await decodeImage(file);
    expect(p0.planes[0][0]).toBe(0);
    await expect(decodeImage(file, { page: 3 })).rejects.toThrow(
      `${file}: has 3 pages; page 3 does not exist (pages count from 0, so use 0–2)`,
    );
  });

  it('does not colour-convert a file with an embedded non-sRGB ICC profile (samples equal pngjs, which ignores ICC)', async () => {
    const file = join(dir, 'p3.png');
    await writeFile(
      file,
      await sharp({ create: { width: 9, height: 7, channels: 3, background: { r: 200, g: 40, b: 90 } } })
        .withIccProfile('p3')
        .png()
        .toBuffer(),
    );
    const img = await decodeImage(file);
    expect(img.meta.icc?.length).toBeGreaterThan(100);
    const png = PNG.sync.read(await readFile(file));
    for (let c = 0; c < 3; c++) expect(img.planes[c][10]).toBe(png.data[4 * 10 + c]);
  });
});

describe('decodeImage formats', () => {
  it('lossless WebP RGBA decodes to the written samples (sharp/libwebp encoder, lossless mode)', async () => {
    const w = 16;
    const h = 8;
    const px = Uint8Array.from({ length: w * h * 4 }, (_, i) =>
      i % 4 === 3 ? 200 - (i % 50) : (i * 29) % 256,
    );
    const file = join(dir, 'slide.webp');
    await writeFile(
      file,
      await sharp(px, { raw: { width: w, height: h, channels: 4 } })
        .webp({ lossless: true, exact: true })
        .toBuffer(),
    );
    const img = await decodeImage(file);
    expect([img.meta.format, img.channels, img.bitDepth, img.hasAlpha]).toEqual(['webp', 4, 8, true]);
    for (let i = 0; i < w * h; i++) for (let c = 0; c < 4; c++) expect(img.planes[c][i]).toBe(px[4 * i + c]);
  });

  it('CMYK JPEG is converted to 3-channel RGB, and its CMYK profile is not carried over', async () => {
    const file = join(dir, 'cmyk.jpg');
    await writeFile(
      file,
      await sharp({ create: { width: 12, height: 10, channels: 3, background: { r: 30, g: 120, b: 200 } } })
        .toColourspace('cmyk')
        .jpeg({ quality: 95 })
        .toBuffer(),
    );
    expect((await sharp(file).metadata()).space).toBe('cmyk');
    const img = await decodeImage(file);
    expect([img.channels, img.colour, img.meta.icc]).toEqual([3, 'rgb', undefined]);
  });
});

describe('decodeImage errors name the file and the problem', () => {
  it('missing file', async () => {
    const f = join(dir, 'nope.png');
    await expect(decodeImage(f)).rejects.toThrow(`${f}: no such file`);
  });

  it('folder', async () => {
    const f = join(dir, 'a-folder.png');
    await mkdir(f);
    await expect(decodeImage(f)).rejects.toThrow(`${f}: is a folder, not an image file`);
  });

  it('0-byte file', async () => {
    const f = join(dir, 'empty.png');
    await writeFile(f, '');
    await expect(decodeImage(f)).rejects.toThrow(`${f}: is empty (0 bytes)`);
  });

  it('non-image', async () => {
    const f = join(dir, 'notes.png');
    await writeFile(f, 'Harrowgate County Survey Office: ledger 14, not an image\n');
    await expect(decodeImage(f)).rejects.toThrow(
      `${f}: is not an image Rankfold can read (unrecognised contents); Rankfold reads PNG, TIFF, JPEG and WebP`,
    );
  });

  it('unsupported format (GIF)', async () => {
    const f = join(dir, 'x.gif');
    await writeFile(
      f,
      await sharp(ramp(4, 4), { raw: { width: 4, height: 4, channels: 1 } })
        .gif()
        .toBuffer(),
    );
    await expect(decodeImage(f)).rejects.toThrow(
      `${f}: is in an unsupported format ("gif"); Rankfold reads PNG, TIFF, JPEG and WebP`,
    );
  });

  it('truncated PNG', async () => {
    const f = join(dir, 'trunc.png');
    const full = await sharp(ramp(64, 64), { raw: { width: 64, height: 64, channels: 1 } })
      .png()
      .toBuffer();
    await writeFile(f, full.subarray(0, Math.floor(full.length / 2)));
    await expect(decodeImage(f)).rejects.toThrow(
      `${f}: cannot be decoded: it starts as a PNG file but the rest is truncated or corrupt`,
    );
  });

  it('truncated TIFF: named by its signature, not as an unknown format', async () => {
    const f = join(dir, 'trunc.tif');
    const full = await sharp(ramp(64, 64), { raw: { width: 64, height: 64, channels: 1 } })
      .tiff()
      .toBuffer();
    // Cut inside the image directory, so libvips no longer recognises the file at all.
    await writeFile(f, full.subarray(0, 12));
    await expect(decodeImage(f)).rejects.toThrow(
      `${f}: cannot be read: it starts as a TIFF file but the rest is truncated or corrupt`,
    );
  });

  it('sniffFormat knows the signatures of the formats Rankfold reads (PNG, TIFF 6.0 §2 / BigTIFF, JPEG SOI, RIFF WebP; common practice)', () => {
    const b = (...x: number[]) => Uint8Array.from([...x, ...new Array(16).fill(0)]);
    expect(sniffFormat(b(0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a))).toBe('PNG');
    expect(sniffFormat(b(0x49, 0x49, 0x2a, 0x00))).toBe('TIFF');
    expect(sniffFormat(b(0x4d, 0x4d, 0x00, 0x2a))).toBe('TIFF');
    expect(sniffFormat(b(0xff, 0xd8, 0xff, 0xe0))).toBe('JPEG');
    expect(sniffFormat(b(0x52, 0x49, 0x46, 0x46, 1, 2, 3, 4, 0x57, 0x45, 0x42, 0x50))).toBe('WebP');
    expect(sniffFormat(b(0x68, 0x65, 0x6c, 0x6c, 0x6f))).toBeUndefined();
  });

  it('over the pixel limit: states the limit', async () => {
    await expect(decodeImage(image('camera.png'), { pixelLimit: 1000 })).rejects.toThrow(
      `${image('camera.png')}: is 512×512 = 262144 pixels, over the pixel limit of 1000 (sharp limitInputPixels); raise it with --pixel-limit`,
    );
    await expect(probeImage(image('camera.png'), { pixelLimit: 262144 })).resolves.toMatchObject({
      width: 512,
    });
    expect(DEFAULT_PIXEL_LIMIT).toBe(268_402_689);
  });

  it('bad options use the project error format', async () => {
    await expect(decodeImage(image('camera.png'), { page: -1 })).rejects.toThrow(
      'Expected integer between 0 and 100000 for page but received -1 of type number',
    );
  });
});
