/**
 * Put an ICC profile and an orientation into PNG and TIFF bytes that sharp wrote without them.
 *
 * Why by hand: sharp 0.35 attaches an ICC profile only through `withIccProfile(path)`, which also
 * colour-converts the pixels, and `withMetadata({ orientation })` attaches an sRGB profile and converts
 * gray to RGB. Both would break bit-exact output, so the pixels are encoded by sharp and the metadata is
 * added here, without touching the pixel data.
 *
 * References
 * - PNG (Third Edition), W3C 2025 / ISO/IEC 15948: §11.3.2.4 iCCP (profile name, null, compression method 0,
 *   zlib stream), eXIf (an Exif/TIFF structure, before IDAT), §5.3 chunk layout with CRC-32 over type+data.
 * - TIFF 6.0 (Adobe 1992): §2 header and IFD structure (entries sorted by tag, word-aligned offsets),
 *   tag 274 Orientation (SHORT). ICC.1:2022 Annex B.4: TIFF tag 34675 InterColorProfile (UNDEFINED).
 */
import { open } from 'node:fs/promises';
import { crc32, deflateSync, inflateSync } from 'node:zlib';
import { displayName } from '../../contract';

const PNG_SIGNATURE = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);

export interface ExtraMetadata {
  icc?: Uint8Array;
  /** EXIF orientation 2–8; 1 or undefined writes nothing. */
  orientation?: number;
  /**
   * The image states no resolution. libvips writes its default of 1 pixel per mm (pHYs 1000 px/m, TIFF
   * 25.4 dpi) into every file, which other readers take as a real 25.4 dpi; with this set the PNG loses its
   * pHYs chunk (absent = unknown, PNG 3rd ed. §11.3.5.3) and the TIFF gets ResolutionUnit 1, "no absolute
   * unit of measurement" (TIFF 6.0 tag 296).
   */
  noResolution?: boolean;
}

function pngChunk(type: string, data: Uint8Array): Buffer {
  const out = Buffer.alloc(12 + data.length);
  out.writeUInt32BE(data.length, 0);
  out.write(type, 4, 'latin1');
  Buffer.from(data.buffer, data.byteOffset, data.byteLength).copy(out, 8);
  out.writeUInt32BE(crc32(out.subarray(4, 8 + data.length)), 8 + data.length);
  return out;
}

/** A big-endian Exif (TIFF-structured) block with a single IFD0 entry: Orientation. */
function exifOrientation(o: number): Buffer {
  const b = Buffer.alloc(8 + 2 + 12 + 4);
  b.write('MM', 0, 'latin1');
  b.writeUInt16BE(42, 2);
  b.writeUInt32BE(8, 4);
  b.writeUInt16BE(1, 8);
  b.writeUInt16BE(0x0112, 10); // Orientation
  b.writeUInt16BE(3, 12); // SHORT
  b.writeUInt32BE(1, 14);
  b.writeUInt16BE(o, 18);
  b.writeUInt32BE(0, 22); // no next IFD
  return b;
}

/** Insert iCCP and eXIf after IHDR, dropping any sRGB/iCCP/eXIf chunk the encoder wrote. */
export function addPngMetadata(png: Buffer, extra: ExtraMetadata): Buffer {
  if (!extra.icc && !(extra.orientation && extra.orientation !== 1) && !extra.noResolution) return png;
  if (
    png.length < 33 ||
    !png.subarray(0, 8).equals(PNG_SIGNATURE) ||
    png.toString('latin1', 12, 16) !== 'IHDR'
  )
    throw new Error('internal: encoder output is not a PNG');
  const parts: Buffer[] = [png.subarray(0, 33)];
  if (extra.icc) {
    const name = Buffer.from('ICC profile\0\0', 'latin1'); // name, null separator, compression method 0
    parts.push(pngChunk('iCCP', Buffer.concat([name, deflateSync(extra.icc, { level: 9 })])));
  }
  if (extra.orientation && extra.orientation !== 1)
    parts.push(pngChunk('eXIf', exifOrientation(extra.orientation)));
  let p = 33;
  while (p + 12 <= png.length) {
    const len = png.readUInt32BE(p);
    const type = png.toString('latin1', p + 4, p + 8);
    const end = p + 12 + len;
    if (end > png.length) throw new Error('internal: encoder output PNG is truncated');
    const drop =
      (extra.icc && (type === 'iCCP' || type === 'sRGB')) ||
      (extra.orientation && type === 'eXIf') ||
      (extra.noResolution && type === 'pHYs');
    if (!drop) parts.push(png.subarray(p, end));
    p = end;
  }
  return Buffer.concat(parts);
}

interface IfdEntry {
  tag: number;
  raw: Buffer; // the 12 bytes
}

/** Rewrite IFD0 of a classic TIFF with Orientation, InterColorProfile and ResolutionUnit set; the old IFD becomes unused bytes. */
export function addTiffMetadata(tiff: Buffer, extra: ExtraMetadata): Buffer {
  if (!extra.icc && !(extra.orientation && extra.orientation !== 1) && !extra.noResolution) return tiff;
  const order = tiff.toString('latin1', 0, 2);
  if (order !== 'II' && order !== 'MM') throw new Error('internal: encoder output is not a TIFF');
  const le = order === 'II';
  const u16 = (o: number) => (le ? tiff.readUInt16LE(o) : tiff.readUInt16BE(o));
  const u32 = (o: number) => (le ? tiff.readUInt32LE(o) : tiff.readUInt32BE(o));
  if (u16(2) !== 42)
    throw new Error('internal: encoder wrote a BigTIFF; metadata patching needs classic TIFF');
  const ifd = u32(4);
  const n = u16(ifd);
  const next = u32(ifd + 2 + 12 * n);
  const entries: IfdEntry[] = [];
  for (let i = 0; i < n; i++) {
    const at = ifd + 2 + 12 * i;
    entries.push({ tag: u16(at), raw: Buffer.from(tiff.subarray(at, at + 12)) });
  }
  const entry = (tag: number, type: number, count: number, value: (b: Buffer) => void): IfdEntry => {
    const raw = Buffer.alloc(12);
    if (le) {
      raw.writeUInt16LE(tag, 0);
      raw.writeUInt16LE(type, 2);
      raw.writeUInt32LE(count, 4);
    } else {
      raw.writeUInt16BE(tag, 0);
      raw.writeUInt16BE(type, 2);
      raw.writeUInt32BE(count, 4);
    }
    value(raw);
    return { tag, raw };
  };
  const tail: Buffer[] = [];
  let end = tiff.length + (tiff.length % 2);
  const pad = Buffer.alloc(tiff.length % 2);
  const set = (e: IfdEntry) => {
    const i = entries.findIndex((x) => x.tag === e.tag);
    if (i >= 0) entries[i] = e;
    else entries.push(e);
  };
  if (extra.orientation && extra.orientation !== 1) {
    const o = extra.orientation;
    set(entry(274, 3, 1, (b) => (le ? b.writeUInt16LE(o, 8) : b.writeUInt16BE(o, 8))));
  }
  if (extra.noResolution) set(entry(296, 3, 1, (b) => (le ? b.writeUInt16LE(1, 8) : b.writeUInt16BE(1, 8))));
  if (extra.icc) {
    const icc = Buffer.from(extra.icc.buffer, extra.icc.byteOffset, extra.icc.byteLength);
    const at = end;
    tail.push(icc);
    end += icc.length;
    if (icc.length % 2) {
      tail.push(Buffer.alloc(1));
      end += 1;
    }
    set(entry(34675, 7, icc.length, (b) => (le ? b.writeUInt32LE(at, 8) : b.writeUInt32BE(at, 8))));
  }
  entries.sort((a, b) => a.tag - b.tag);
  const newIfd = Buffer.alloc(2 + 12 * entries.length + 4);
  if (le) newIfd.writeUInt16LE(entries.length, 0);
  else newIfd.writeUInt16BE(entries.length, 0);
  for (let i = 0; i < entries.length; i++) entries[i].raw.copy(newIfd, 2 + 12 * i);
  if (le) newIfd.writeUInt32LE(next, 2 + 12 * entries.length);
  else newIfd.writeUInt32BE(next, 2 + 12 * entries.length);
  const ifdAt = end;
  if (ifdAt + newIfd.length > 0xffffffff) throw new Error('internal: TIFF would exceed 4 GiB');
  const out = Buffer.concat([tiff, pad, ...tail, newIfd]);
  if (le) out.writeUInt32LE(ifdAt, 4);
  else out.writeUInt32BE(ifdAt, 4);
  return out;
}

/** The largest resolution Rankfold keeps, in pixels per inch. Its PNG and TIFF writers accept (0, 10^6]. */
const MAX_DENSITY = 1_000_000;
/** The largest ICC profile Rankfold keeps (16 MiB; real profiles are a few kB to a few MB). */
const MAX_ICC_BYTES = 16 * 1024 * 1024;

/**
 * Why an ICC profile cannot be kept, or undefined when it looks sound. Checks the header only (ICC.1:2022
 * §7.2: profile size at byte 0 equal to the byte count, 'acsp' at byte 36; a header is 128 bytes and a tag
 * count follows), not the tags.
 */
function iccProblem(icc: Uint8Array): string | undefined {
  if (icc.length < 132) return `is only ${icc.length} bytes, shorter than an ICC header`;
  if (icc.length > MAX_ICC_BYTES)
    return `is ${icc.length} bytes, larger than the ${MAX_ICC_BYTES} Rankfold keeps`;
  const b = Buffer.from(icc.buffer, icc.byteOffset, icc.byteLength);
  if (b.toString('latin1', 36, 40) !== 'acsp') return 'lacks the ICC signature "acsp"';
  const declared = b.readUInt32BE(0);
  if (declared !== icc.length) return `says it is ${declared} bytes but holds ${icc.length}`;
  return undefined;
}

export interface MetadataToKeep {
  icc?: Uint8Array;
  density?: number;
  orientation?: number;
}

/**
 * Keep only metadata the .rkf container and the PNG/TIFF writers can hold; everything else is dropped
 * with a warning naming the file (one sentence each). Used on decode (nothing unwritable enters a
 * container) and on expand (containers written before this check still expand, without the bad value).
 */
export function keepableMetadata(
  file: string,
  meta: { icc?: Uint8Array; density?: unknown; orientation?: unknown },
  stage: 'source' | 'container',
): { meta: MetadataToKeep; warnings: string[] } {
  const name = displayName(file);
  const warnings: string[] = [];
  const out: MetadataToKeep = {};
  const whose = stage === 'source' ? 'its' : 'its stored';
  const dropped =
    stage === 'source'
      ? 'it is left out and the pixels are kept'
      : 'it was left out and the pixels were written';
  const d = meta.density;
  if (d !== undefined && d !== null) {
    if (typeof d === 'number' && Number.isFinite(d) && d > 0 && d <= MAX_DENSITY) out.density = d;
    else
      warnings.push(
        `${name}: ${whose} resolution of ${typeof d === 'number' ? `${formatNumber(d)} pixels per inch` : JSON.stringify(d)} is outside the 0–${MAX_DENSITY} pixels per inch that PNG and TIFF output can hold, so ${dropped}`,
      );
  }
  const o = meta.orientation;
  if (o !== undefined && o !== null) {
    if (typeof o === 'number' && Number.isInteger(o) && o >= 1 && o <= 8) out.orientation = o;
    else
      warnings.push(
        `${name}: ${whose} EXIF orientation ${JSON.stringify(o)} is not one of 1–8 (Exif 2.32 tag 0x0112), so it is ignored and ${stage === 'source' ? 'the pixels are used as stored' : 'the pixels were written as stored'}`,
      );
  }
  if (meta.icc) {
    const problem = iccProblem(meta.icc);
    if (problem === undefined) out.icc = meta.icc;
    else warnings.push(`${name}: ${whose} embedded ICC profile ${problem}, so ${dropped}`);
  }
  return { meta: out, warnings };
}

function formatNumber(x: number): string {
  return Number.isFinite(x) ? String(Math.round(x * 1000) / 1000) : String(x);
}

/**
 * The ICC profile and resolution chunks of a PNG, read by hand up to the first IDAT (PNG Third Edition
 * §11.3.2.4 iCCP: keyword of 1–79 bytes, a null, compression method 0, zlib data; §11.3.5.3 pHYs; both
 * must precede IDAT, §5.6). libpng 1.6 (under sharp) drops a profile whose colour space does not match
 * the image (an RGB profile on a grey PNG); Rankfold keeps such a profile byte for byte, as it does for
 * TIFF. libvips reports 72 dpi for a PNG without pHYs; `hasPhys` tells the two apart.
 */
export async function readPngMetadata(
  file: string,
): Promise<{ icc?: Uint8Array; iccProblem?: string; hasPhys: boolean }> {
  const fh = await open(file, 'r');
  const out: { icc?: Uint8Array; iccProblem?: string; hasPhys: boolean } = { hasPhys: false };
  try {
    const { size } = await fh.stat();
    const head = Buffer.alloc(9);
    let p = 8;
    for (let guard = 0; guard < 10_000 && p + 8 <= size; guard++) {
      const { bytesRead } = await fh.read(head, 0, 8, p);
      if (bytesRead < 8) break;
      const len = head.readUInt32BE(0);
      const type = head.toString('latin1', 4, 8);
      if (type === 'IDAT' || type === 'IEND') break;
      if (type === 'pHYs' && len === 9 && p + 17 <= size) {
        await fh.read(head, 0, 9, p + 8);
        out.hasPhys = head[8] === 1; // unit 1 = metre; 0 = aspect ratio only
      }
      if (type === 'iCCP' && out.icc === undefined && out.iccProblem === undefined) {
        if (len > MAX_ICC_BYTES || p + 8 + len > size) out.iccProblem = 'is cut short or too large';
        else {
          const data = Buffer.alloc(len);
          await fh.read(data, 0, len, p + 8);
          const nul = data.indexOf(0);
          if (nul < 1 || nul > 79 || data[nul + 1] !== 0) out.iccProblem = 'has a malformed iCCP chunk';
          else
            try {
              const icc = inflateSync(data.subarray(nul + 2), { maxOutputLength: MAX_ICC_BYTES });
              out.icc = new Uint8Array(icc);
            } catch {
              out.iccProblem = 'cannot be unpacked (its compressed data is damaged)';
            }
        }
      }
      p += 12 + len;
    }
    return out;
  } finally {
    await fh.close();
  }
}
