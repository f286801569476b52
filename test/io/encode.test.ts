import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PNG } from 'pngjs';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeImage } from '../../src-main/node/image/decode';
import {
  encodeImage,
  encodeImageBuffer,
  formatFromPath,
  quantiseInterleave,
} from '../../src-main/node/image/encode';
import { type Orientation, toStored, toUpright } from '../../src-main/node/image/orientation';
import { lcg } from '../helpers/lcg';

// Independent readers used below: pngjs 7.0.0 (pure-JS PNG decoder, checks every chunk CRC) and
// sharp 0.35 / libvips metadata() and rotate() (EXIF orientation per CIPA DC-008 tag 0x0112).
let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-encode-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** Planes with random samples including 0 and the maximum at fixed places. */
function randomPlanes(w: number, h: number, ch: number, depth: 8 | 16, seed = 1): Float32Array[] {
  const max = depth === 16 ? 65535 : 255;
  const rnd = lcg(seed);
  return Array.from({ length: ch }, () => {
    const p = Float32Array.from({ length: w * h }, () => Math.floor(rnd() * (max + 1)));
    p[0] = 0;
    p[p.length - 1] = max;
    return p;
  });
}

async function iccProfile(): Promise<Uint8Array> {
  // libvips' built-in Display P3 profile, attached by sharp's withIccProfile('p3'): a real, non-sRGB profile.
  const png = await sharp({ create: { width: 1, height: 1, channels: 3, background: '#000' } })
    .withIccProfile('p3')
    .png()
    .toBuffer();
  return new Uint8Array((await sharp(png).metadata()).icc!);
}

describe('encodeImage round trip', () => {
  for (const format of ['png', 'tiff'] as const)
    for (const depth of [8, 16] as const)
      for (const ch of [1, 2, 3, 4] as const)
        it(`${format} ${depth}-bit ${['gray', 'gray+alpha', 'RGB', 'RGBA'][ch - 1]}: bit-exact through decodeImage`, async () => {
          const w = 37;
          const h = 23;
          const planes = randomPlanes(w, h, ch, depth, ch * 100 + depth);
          const file = join(dir, `rt-${depth}-${ch}.${format === 'png' ? 'png' : 'tif'}`);
          const res = await encodeImage(file, { width: w, height: h, channels: ch, bitDepth: depth, planes });
          expect(res.format).toBe(format);
          const back = await decodeImage(file);
          expect([back.width, back.height, back.channels, back.bitDepth]).toEqual([w, h, ch, depth]);
          expect(back.meta.format).toBe(format);
          for (let c = 0; c < ch; c++)
            expect(Buffer.from(back.planes[c].buffer).equals(Buffer.from(planes[c].buffer))).toBe(true);
        });

  for (const depth of [8, 16] as const)
    for (const ch of [1, 2, 3, 4] as const)
      it(`PNG ${depth}-bit, ${ch} channel(s): pngjs 7.0.0 reads the same samples, depth and colour type (PNG spec colour types 0/4/2/6)`, async () => {
        const w = 19;
        const h = 11;
        const planes = randomPlanes(w, h, ch, depth, 7 + ch);
        const buf = await encodeImageBuffer(
          { width: w, height: h, channels: ch, bitDepth: depth, planes },
          { format: 'png' },
        );
        const png = PNG.sync.read(buf, { skipRescale: true });
        expect(png.width).toBe(w);
        expect(png.height).toBe(h);
        expect(png.depth).toBe(depth);
        expect(png.colorType).toBe([0, 4, 2, 6][ch - 1]);
        const max = depth === 16 ? 65535 : 255;
        const data = png.data as unknown as ArrayLike<number>; // pngjs normalises to RGBA
        for (let i = 0; i < w * h; i++) {
          const gray = ch <= 2;
          expect(data[4 * i]).toBe(planes[0][i]);
          expect(data[4 * i + 1]).toBe(gray ? planes[0][i] : planes[1][i]);
          expect(data[4 * i + 2]).toBe(gray ? planes[0][i] : planes[2][i]);
          expect(data[4 * i + 3]).toBe(ch === 2 ? planes[1][i] : ch === 4 ? planes[3][i] : max);
        }
      });
});

describe('quantisation', () => {
  it('rounds half away from zero and clamps to the bit depth', () => {
    const plane = new Float32Array([-3, 0.4, 0.5, 1.5, 254.5, 254.4, 300, 65535.7]);
    const base = { width: 8, height: 1, channels: 1 as const, planes: [plane] };
    expect(Array.from(quantiseInterleave({ ...base, bitDepth: 8 }))).toEqual([
      0, 0, 1, 2, 255, 254, 255, 255,
    ]);
    expect(Array.from(quantiseInterleave({ ...base, bitDepth: 16 }))).toEqual([
      0, 0, 1, 2, 255, 254, 300, 65535,
    ]);
  });

  it('refuses a non-finite sample and names plane and index; nothing is written', async () => {
    const file = join(dir, 'nan.png');
    const plane = new Float32Array(4);
    plane[2] = Number.NaN;
    await expect(
      encodeImage(file, { width: 2, height: 2, channels: 1, bitDepth: 8, planes: [plane] }),
    ).rejects.toThrow('sample 2 of plane 0 is NaN, not a finite number; nothing was written');
    expect(await readdir(dir)).not.toContain('nan.png');
  });

  it('checks sizes and channel counts with the project error format', async () => {
    await expect(
      encodeImageBuffer(
        { width: 2, height: 2, channels: 3, bitDepth: 8, planes: [new Float32Array(4)] },
        { format: 'png' },
      ),
    ).rejects.toThrow(
      'Expected a list of 3 planes (one per channel) for planes but received 1 of type number',
    );
    await expect(
      encodeImageBuffer(
        { width: 2, height: 2, channels: 1, bitDepth: 8, planes: [new Float32Array(5)] },
        { format: 'png' },
      ),
    ).rejects.toThrow('Expected 4 samples (2×2) for planes[0] but received 5 of type number');
  });
});

describe('metadata written back', () => {
  it('ICC profile and DPI survive PNG and TIFF, read back by sharp/libvips; the samples are not colour-converted', async () => {
    const icc = await iccProfile();
    const planes = randomPlanes(16, 9, 3, 8, 5);
    for (const ext of ['png', 'tif']) {
      const file = join(dir, `meta.${ext}`);
      await encodeImage(file, {
        width: 16,
        height: 9,
        channels: 3,
        bitDepth: 8,
        planes,
        meta: { icc, density: 600 },
      });
      const m = await sharp(file).metadata();
      expect(Buffer.from(m.icc!).equals(Buffer.from(icc))).toBe(true);
      // PNG pHYs stores whole pixels per metre: 600 dpi → 23622 px/m → 599.9988 dpi (PNG spec §11.3.5.3).
      expect(Math.abs((m.density ?? 0) - 600)).toBeLessThan(ext === 'png' ? 0.01 : 1e-9);
      const back = await decodeImage(file);
      expect(Buffer.from(back.meta.icc!).equals(Buffer.from(icc))).toBe(true);
      for (let c = 0; c < 3; c++) expect(Array.from(back.planes[c])).toEqual(Array.from(planes[c]));
    }
    // pngjs verifies the CRC of the iCCP chunk we inserted.
    expect(() => PNG.sync.read(Buffer.from(new Uint8Array(0)))).toThrow();
    const png = PNG.sync.read(await readFile(join(dir, 'meta.png')));
    expect(png.width).toBe(16);
  });

  it('orientation: toUpright agrees with libvips rotate() for all eight EXIF orientations (CIPA DC-008 tag 0x0112)', async () => {
    const w = 5;
    const h = 3;
    const stored = Uint8Array.from({ length: w * h }, (_, i) => i * 10);
    for (let o = 1 as Orientation; o <= 8; o = (o + 1) as Orientation) {
      const tagged = await sharp(stored, { raw: { width: w, height: h, channels: 1 } })
        .withMetadata({ orientation: o })
        .toColourspace('b-w')
        .png()
        .toBuffer();
      const viaSharp = await sharp(tagged)
        .rotate()
        .toColourspace('b-w')
        .raw()
        .toBuffer({ resolveWithObject: true });
      const ours = toUpright(stored, w, h, o);
      expect([ours.width, ours.height]).toEqual([viaSharp.info.width, viaSharp.info.height]);
      expect(Array.from(ours.plane)).toEqual(Array.from(viaSharp.data));
      expect(Array.from(toStored(ours.plane, ours.width, ours.height, o).plane)).toEqual(Array.from(stored));
    }
  });

  for (const ext of ['png', 'tif'])
    it(`${ext}: orientation 6 is restored (stored layout + tag) and decodes back to the same upright pixels`, async () => {
      const planes = randomPlanes(7, 4, 1, 16, 9);
      const file = join(dir, `orient6.${ext}`);
      await encodeImage(file, {
        width: 7,
        height: 4,
        channels: 1,
        bitDepth: 16,
        planes,
        meta: { orientation: 6 },
      });
      const m = await sharp(file).metadata();
      expect([m.orientation, m.width, m.height]).toEqual([6, 4, 7]);
      const back = await decodeImage(file);
      expect([back.width, back.height, back.meta.orientation]).toEqual([7, 4, 6]);
      expect(Array.from(back.planes[0])).toEqual(Array.from(planes[0]));
      const upright = join(dir, `orient6-upright.${ext}`);
      await encodeImage(
        upright,
        { width: 7, height: 4, channels: 1, bitDepth: 16, planes, meta: { orientation: 6 } },
        {
          orientation: 'upright',
        },
      );
      const mu = await sharp(upright).metadata();
      expect([mu.orientation ?? 1, mu.width, mu.height]).toEqual([1, 7, 4]);
    });
});

describe('writing safely', () => {
  it('refuses to overwrite without force (OutputError naming the file), leaves the file untouched, and overwrites with force', async () => {
    const file = join(dir, 'exists.png');
    await writeFile(file, 'original bytes');
    const img = {
      width: 2,
      height: 2,
      channels: 1 as const,
      bitDepth: 8 as const,
      planes: [new Float32Array(4)],
    };
    await expect(encodeImage(file, img)).rejects.toThrow(
      `${file}: already exists; pass --force to overwrite it`,
    );
    await expect(encodeImage(file, img)).rejects.toHaveProperty('name', 'OutputError');
    expect(await readFile(file, 'utf8')).toBe('original bytes');
    await encodeImage(file, img, { force: true });
    expect((await sharp(file).metadata()).format).toBe('png');
    expect((await readdir(dir)).filter((f) => f.startsWith('.rankfold-tmp-'))).toEqual([]);
  });

  it('picks the format from the extension and rejects others', () => {
    expect(formatFromPath('a/b.PNG')).toBe('png');
    expect(formatFromPath('scan.tif')).toBe('tiff');
    expect(formatFromPath('scan.tiff')).toBe('tiff');
    expect(() => formatFromPath('scan.jpg')).toThrow(
      'scan.jpg: cannot tell the output format from the extension ".jpg"; use .png, .tif or .tiff',
    );
  });
});
