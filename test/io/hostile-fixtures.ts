/**
 * Builders for hostile and unusual image files, made in memory for the fault-campaign tests.
 *
 * - `buildTiff`: a classic little-endian TIFF with one uncompressed strip (TIFF 6.0 §2 header and IFD;
 *   §3–§6 baseline tags 256, 257, 258, 259, 262, 273, 277, 278, 279, 284; §5 ColorMap 320; §18 ExtraSamples
 *   338; §19 SampleFormat 339; §21 Photometric 5 = separated (CMYK), §23 Photometric 8 = CIELab).
 * - `buildPng`: PNG from IHDR fields and raw (already filtered) scanlines, with extra chunks
 *   (W3C PNG Third Edition §5.3 chunk layout, §11.2.1 IHDR, §11.3.5.3 pHYs, §11.3.2.4 iCCP).
 * - `greyIccProfile`: a minimal ICC v2 monochrome display profile (ICC.1:2001-04 §6.1 header, §6.3.1.1
 *   monochrome input/display profile: desc, wtpt, kTRC, cprt). Made for tests; not a calibrated profile.
 */
import { crc32, deflateSync } from 'node:zlib';

export interface TiffSpec {
  width: number;
  height: number;
  /** Bits per sample, one value used for every sample. */
  bits: number;
  samplesPerPixel: number;
  /** TIFF 6.0 PhotometricInterpretation: 0 white-is-zero, 1 black-is-zero, 2 RGB, 3 palette, 5 separated, 6 YCbCr, 8 CIELab, 9 ICCLab, 10 ITULab. */
  photometric: number;
  /** SampleFormat: 1 unsigned (default), 2 signed, 3 IEEE float. */
  sampleFormat?: number;
  /** ExtraSamples values (0 unspecified, 1 associated alpha, 2 unassociated alpha). */
  extraSamples?: number[];
  /** ColorMap for photometric 3: 3·2^bits SHORTs. Default: a grey ramp. */
  colorMap?: number[];
  /** Raw strip bytes. Default: a deterministic ramp of the right length. */
  data?: Uint8Array;
  /** Extra IFD entries: [tag, type, count, value-bytes]. */
  extraTags?: Array<[number, number, number, Uint8Array]>;
}

const TYPE_SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 7: 1, 11: 4, 12: 8 };

export function buildTiff(s: TiffSpec): Buffer {
  const rowBytes = Math.ceil((s.width * s.samplesPerPixel * s.bits) / 8);
  const dataLen = rowBytes * s.height;
  const data = s.data ?? Uint8Array.from({ length: dataLen }, (_, i) => (i * 37 + 11) & 0xff);
  const u16s = (vals: number[]) => {
    const b = Buffer.alloc(vals.length * 2);
    for (let i = 0; i < vals.length; i++) b.writeUInt16LE(vals[i], i * 2);
    return b;
  };
  const u32 = (v: number) => {
    const b = Buffer.alloc(4);
    b.writeUInt32LE(v, 0);
    return b;
  };
  const entries: Array<[number, number, number, Uint8Array]> = [
    [256, 4, 1, u32(s.width)],
    [257, 4, 1, u32(s.height)],
    [258, 3, s.samplesPerPixel, u16s(Array(s.samplesPerPixel).fill(s.bits))],
    [259, 3, 1, u16s([1])],
    [262, 3, 1, u16s([s.photometric])],
    [273, 4, 1, u32(0)], // patched below
    [277, 3, 1, u16s([s.samplesPerPixel])],
    [278, 4, 1, u32(s.height)],
    [279, 4, 1, u32(data.length)],
    [284, 3, 1, u16s([1])],
  ];
  if (s.photometric === 3) {
    const n = 2 ** s.bits;
    const map =
      s.colorMap ??
      [0, 1, 2].flatMap(() => Array.from({ length: n }, (_, i) => Math.round((i * 65535) / (n - 1))));
    entries.push([320, 3, map.length, u16s(map)]);
  }
  if (s.extraSamples) entries.push([338, 3, s.extraSamples.length, u16s(s.extraSamples)]);
  if (s.sampleFormat)
    entries.push([339, 3, s.samplesPerPixel, u16s(Array(s.samplesPerPixel).fill(s.sampleFormat))]);
  for (const e of s.extraTags ?? []) entries.push(e);
  entries.sort((a, b) => a[0] - b[0]);
  // Layout: header (8) | IFD | out-of-line values | strip.
  const ifdLen = 2 + 12 * entries.length + 4;
  let off = 8 + ifdLen;
  const blobs: Buffer[] = [];
  const ifd = Buffer.alloc(ifdLen);
  ifd.writeUInt16LE(entries.length, 0);
  const outOfLine: number[] = [];
  entries.forEach(([tag, type, count, value], i) => {
    const at = 2 + 12 * i;
    ifd.writeUInt16LE(tag, at);
    ifd.writeUInt16LE(type, at + 2);
    ifd.writeUInt32LE(count, at + 4);
    const size = (TYPE_SIZE[type] ?? 1) * count;
    if (size <= 4) Buffer.from(value).copy(ifd, at + 8);
    else {
      if (off % 2) {
        blobs.push(Buffer.alloc(1));
        off++;
      }
      ifd.writeUInt32LE(off, at + 8);
      blobs.push(Buffer.from(value));
      outOfLine.push(i);
      off += value.length;
    }
  });
  if (off % 2) {
    blobs.push(Buffer.alloc(1));
    off++;
  }
  const stripAt = off;
  const i273 = entries.findIndex((e) => e[0] === 273);
  ifd.writeUInt32LE(stripAt, 2 + 12 * i273 + 8);
  const head = Buffer.from([0x49, 0x49, 42, 0, 8, 0, 0, 0]);
  return Buffer.concat([head, ifd, ...blobs, Buffer.from(data)]);
}

export function pngChunk(type: string, data: Uint8Array): Buffer {
  const out = Buffer.alloc(12 + data.length);
  out.writeUInt32BE(data.length, 0);
  out.write(type, 4, 'latin1');
  Buffer.from(data).copy(out, 8);
  out.writeUInt32BE(crc32(out.subarray(4, 8 + data.length)), 8 + data.length);
  return out;
}

export const PNG_SIGNATURE = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);

export interface PngSpec {
  width: number;
  height: number;
  bitDepth: number;
  colourType: number;
  /** Already-filtered scanlines (filter byte + row). Default: all-zero rows of the right length, capped at 64 kB. */
  raw?: Uint8Array;
  /** Chunks placed between IHDR and IDAT. */
  before?: Buffer[];
}

/** A PNG from IHDR fields; `raw` defaults to zero rows (for a huge declared size, only a small IDAT). */
export function buildPng(s: PngSpec): Buffer {
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(s.width, 0);
  ihdr.writeUInt32BE(s.height, 4);
  ihdr[8] = s.bitDepth;
  ihdr[9] = s.colourType;
  const samples = [1, 0, 3, 1, 2, 0, 4][s.colourType] ?? 1;
  const rowBytes = 1 + Math.ceil((s.width * samples * s.bitDepth) / 8);
  const raw = s.raw ?? new Uint8Array(Math.min(rowBytes * s.height, 65536));
  return Buffer.concat([
    PNG_SIGNATURE,
    pngChunk('IHDR', ihdr),
    ...(s.before ?? []),
    pngChunk('IDAT', deflateSync(raw)),
    pngChunk('IEND', new Uint8Array(0)),
  ]);
}

/** A pHYs chunk (PNG 3rd ed. §11.3.5.3): x and y pixels per unit, unit 1 = metre, 0 = unknown. */
export function physChunk(x: number, y: number, unit = 1): Buffer {
  const d = Buffer.alloc(9);
  d.writeUInt32BE(x >>> 0, 0);
  d.writeUInt32BE(y >>> 0, 4);
  d[8] = unit;
  return pngChunk('pHYs', d);
}

/** Replace (or add after IHDR) every chunk of `type` in a PNG. */
export function replacePngChunk(png: Buffer, type: string, chunk: Buffer | undefined): Buffer {
  const parts: Buffer[] = [png.subarray(0, 33)];
  if (chunk) parts.push(chunk);
  let p = 33;
  while (p + 12 <= png.length) {
    const len = png.readUInt32BE(p);
    const t = png.toString('latin1', p + 4, p + 8);
    if (t !== type) parts.push(png.subarray(p, p + 12 + len));
    p += 12 + len;
  }
  return Buffer.concat(parts);
}

/** The chunks of a PNG, parsed by hand (no decoder): type and data. */
export function pngChunks(png: Uint8Array): Array<{ type: string; data: Buffer }> {
  const b = Buffer.from(png.buffer, png.byteOffset, png.byteLength);
  const out: Array<{ type: string; data: Buffer }> = [];
  let p = 8;
  while (p + 12 <= b.length) {
    const len = b.readUInt32BE(p);
    out.push({ type: b.toString('latin1', p + 4, p + 8), data: b.subarray(p + 8, p + 8 + len) });
    p += 12 + len;
  }
  return out;
}

/** Minimal ICC v2 monochrome profile (see the file comment); `colourSpace` may be set to 'RGB ' to make it mismatch. */
export function greyIccProfile(colourSpace = 'GRAY'): Buffer {
  const desc = (() => {
    const s = 'Rankfold test grey\0';
    const b = Buffer.alloc(12 + s.length + 4 + 4 + 67 + 3);
    b.write('desc', 0);
    b.writeUInt32BE(s.length, 8);
    b.write(s, 12, 'latin1');
    return b;
  })();
  const xyz = (x: number, y: number, z: number) => {
    const b = Buffer.alloc(20);
    b.write('XYZ ', 0);
    b.writeInt32BE(Math.round(x * 65536), 8);
    b.writeInt32BE(Math.round(y * 65536), 12);
    b.writeInt32BE(Math.round(z * 65536), 16);
    return b;
  };
  const curv = Buffer.alloc(14);
  curv.write('curv', 0);
  curv.writeUInt32BE(1, 8);
  curv.writeUInt16BE(0x0233, 12); // gamma 2.2 as u8Fixed8
  const text = Buffer.alloc(8 + 24);
  text.write('text', 0);
  text.write('No copyright, test data', 8, 'latin1');
  const tags: Array<[string, Buffer]> = [
    ['desc', desc],
    ['wtpt', xyz(0.9642, 1, 0.8249)],
    ['kTRC', curv],
    ['cprt', text],
  ];
  const tableLen = 4 + 12 * tags.length;
  let off = 128 + tableLen;
  const parts: Buffer[] = [];
  const table = Buffer.alloc(tableLen);
  table.writeUInt32BE(tags.length, 0);
  tags.forEach(([sig, data], i) => {
    while (off % 4) {
      off++;
      parts.push(Buffer.alloc(1));
    }
    table.write(sig, 4 + 12 * i, 'latin1');
    table.writeUInt32BE(off, 8 + 12 * i);
    table.writeUInt32BE(data.length, 12 + 12 * i);
    parts.push(data);
    off += data.length;
  });
  const body = Buffer.concat([table, ...parts]);
  const h = Buffer.alloc(128);
  h.writeUInt32BE(128 + body.length, 0);
  h.write('none', 4, 'latin1');
  h.writeUInt32BE(0x02100000, 8);
  h.write('mntr', 12, 'latin1');
  h.write(colourSpace, 16, 'latin1');
  h.write('XYZ ', 20, 'latin1');
  h.writeUInt16BE(2026, 24);
  h.writeUInt16BE(1, 26);
  h.writeUInt16BE(1, 28);
  h.write('acsp', 36, 'latin1');
  h.writeInt32BE(Math.round(0.9642 * 65536), 68);
  h.writeInt32BE(65536, 72);
  h.writeInt32BE(Math.round(0.8249 * 65536), 76);
  return Buffer.concat([h, body]);
}
