// Small scan-like test images written with sharp, plus hand-made bad files, for the batch tests.
import { mkdir, writeFile } from 'node:fs/promises';
import { dirname } from 'node:path';
import sharp from 'sharp';

/** A gray 8-bit "ledger page": smooth background, ruled lines and a seeded pattern, so SVD has work to do. */
function pagePixels(width: number, height: number, seed: number, channels = 1): Buffer {
  const buf = Buffer.alloc(width * height * channels);
  let s = seed >>> 0 || 1;
  const rnd = () => {
    s ^= s << 13;
    s ^= s >>> 17;
    s ^= s << 5;
    return (s >>> 0) / 4294967296;
  };
  for (let y = 0; y < height; y++)
    for (let x = 0; x < width; x++) {
      const ruled = y % 12 === 0 ? 70 : 0;
      const ink = (x + 3 * y + seed) % 29 < 2 ? 90 : 0;
      const v = 220 - ruled - ink - 20 * Math.sin((x + seed) / 17) - 8 * rnd();
      for (let c = 0; c < channels; c++)
        buf[(y * width + x) * channels + c] = Math.max(0, Math.min(255, v - c * 15));
    }
  return buf;
}

export async function writePage(
  file: string,
  width: number,
  height: number,
  seed: number,
  format: 'png' | 'tiff' = 'png',
  channels = 1,
) {
  await mkdir(dirname(file), { recursive: true });
  const img = sharp(pagePixels(width, height, seed, channels), {
    raw: { width, height, channels: channels as 1 | 3 },
  });
  await (format === 'png' ? img.png() : img.tiff()).toFile(file);
}

/** 16-bit gray PNG. */
export async function writePage16(file: string, width: number, height: number, seed: number) {
  await mkdir(dirname(file), { recursive: true });
  const p8 = pagePixels(width, height, seed);
  const u16 = new Uint16Array(width * height);
  for (let i = 0; i < u16.length; i++) u16[i] = p8[i] * 257;
  await sharp(Buffer.from(u16.buffer), { raw: { width, height, channels: 1, premultiplied: false } })
    .toColourspace('grey16')
    .png()
    .toFile(file);
}

/**
 * A baseline TIFF with one 32-bit IEEE float sample per pixel (TIFF 6.0: BitsPerSample 258 = 32,
 * SampleFormat 339 = 3), which Rankfold does not read ("unsupported sample format").
 */
export function floatTiff(width: number, height: number): Buffer {
  const data = Buffer.alloc(width * height * 4);
  for (let i = 0; i < width * height; i++) data.writeFloatLE(i / (width * height), i * 4);
  const tags: [number, number, number, number][] = [
    [256, 3, 1, width],
    [257, 3, 1, height],
    [258, 3, 1, 32],
    [259, 3, 1, 1],
    [262, 3, 1, 1],
    [273, 4, 1, 0], // StripOffsets, patched below
    [277, 3, 1, 1],
    [278, 3, 1, height],
    [279, 4, 1, data.length],
    [339, 3, 1, 3],
  ];
  const ifdOffset = 8;
  const ifdSize = 2 + tags.length * 12 + 4;
  const dataOffset = ifdOffset + ifdSize;
  const head = Buffer.alloc(dataOffset);
  head.write('II', 0, 'latin1');
  head.writeUInt16LE(42, 2);
  head.writeUInt32LE(ifdOffset, 4);
  head.writeUInt16LE(tags.length, ifdOffset);
  tags.forEach(([tag, type, count, value], i) => {
    const o = ifdOffset + 2 + i * 12;
    head.writeUInt16LE(tag, o);
    head.writeUInt16LE(type, o + 2);
    head.writeUInt32LE(count, o + 4);
    const v = tag === 273 ? dataOffset : value;
    if (type === 3) head.writeUInt16LE(v, o + 8);
    else head.writeUInt32LE(v, o + 8);
  });
  head.writeUInt32LE(0, ifdOffset + 2 + tags.length * 12);
  return Buffer.concat([head, data]);
}

export async function put(file: string, data: Buffer | string) {
  await mkdir(dirname(file), { recursive: true });
  await writeFile(file, data);
}
