/**
 * Decode a scan through sharp (libvips) into per-channel Float32 planes plus the metadata that
 * `expand` writes back.
 *
 * - EXIF orientation is applied (planes are upright); the source's orientation is kept in `meta`.
 * - 16-bit stays 16-bit (planes on 0–65535); 8-bit and lower depths come out on 0–255.
 * - Alpha is its own plane (channels 2 = gray+alpha, 4 = RGBA).
 * - Samples are not colour-managed: an embedded ICC profile is kept in `meta.icc` and the samples are
 *   exactly as stored. (CMYK sources are the exception: they are converted to sRGB and the CMYK
 *   profile is dropped.) Palette images are expanded to RGB(A).
 * - Multi-page TIFF: `page` picks one page (0-based).
 * - Every failure is an InputError whose message names the file and the problem.
 */
import { createHash } from 'node:crypto';
import { closeSync, openSync, readSync } from 'node:fs';
import { stat } from 'node:fs/promises';
import sharp, { type Metadata, type OutputInfo } from 'sharp';
import { checkInteger, type DecodedImage, InputError } from '../../contract';

/** Default pixel limit: 2^28 ≈ 268 megapixels, sharp's own default for `limitInputPixels`. */
export const DEFAULT_PIXEL_LIMIT = 268_402_689;

export interface DecodeOptions {
  /** TIFF page (0-based). Default 0. */
  page?: number;
  /** Refuse images with more pixels than this (sharp's `limitInputPixels`). Default {@link DEFAULT_PIXEL_LIMIT}. */
  pixelLimit?: number;
}

const SUPPORTED = new Set(['png', 'tiff', 'jpeg', 'webp']);
const FORMAT_NAMES = 'PNG, TIFF, JPEG and WebP';

/** Header facts about a scan, without decoding its pixels. */
export interface ProbeResult {
  meta: Metadata;
  /** Upright size (after EXIF orientation). */
  width: number;
  height: number;
  bitDepth: 8 | 16;
  pages: number;
  inputBytes: number;
}

function checkOptions(options: DecodeOptions) {
  const page = options.page === undefined ? 0 : checkInteger('page', options.page, 0, 100_000);
  const pixelLimit =
    options.pixelLimit === undefined
      ? DEFAULT_PIXEL_LIMIT
      : checkInteger('pixelLimit', options.pixelLimit, 1, 2 ** 42);
  return { page, pixelLimit };
}

/** Read the header only: format, size, depth, pages. Throws InputError naming the file. */
export async function probeImage(file: string, options: DecodeOptions = {}): Promise<ProbeResult> {
  const { page, pixelLimit } = checkOptions(options);
  const st = await statInput(file);
  let meta: Metadata;
  try {
    meta = await sharp(file, { limitInputPixels: false, failOn: 'error' }).metadata();
  } catch (err) {
    throw describeSharpError(file, err, 'read');
  }
  if (!meta.format || !SUPPORTED.has(meta.format))
    throw new InputError(
      file,
      `is in an unsupported format ("${meta.format ?? 'unknown'}"); Rankfold reads ${FORMAT_NAMES}`,
      { format: meta.format },
    );
  const pages = meta.pages ?? 1;
  if (page >= pages)
    throw new InputError(
      file,
      pages === 1
        ? `has 1 page; page ${page} does not exist (pages count from 0, so use 0)`
        : `has ${pages} pages; page ${page} does not exist (pages count from 0, so use 0–${pages - 1})`,
    );
  if (page > 0) {
    try {
      meta = await sharp(file, { limitInputPixels: false, failOn: 'error', page }).metadata();
    } catch (err) {
      throw describeSharpError(file, err, 'read');
    }
  }
  const storedW = meta.width ?? 0;
  const storedH = meta.pageHeight && pages > 1 ? meta.pageHeight : (meta.height ?? 0);
  if (!(storedW > 0 && storedH > 0)) throw new InputError(file, 'has no pixels (width or height is 0)');
  const pixels = storedW * storedH;
  if (pixels > pixelLimit)
    throw new InputError(
      file,
      `is ${storedW}×${storedH} = ${pixels} pixels, over the pixel limit of ${pixelLimit} (sharp limitInputPixels); raise it with --pixel-limit`,
      { pixels, pixelLimit },
    );
  const bitDepth = depthBits(file, meta.depth);
  const swap = (meta.orientation ?? 1) >= 5;
  return {
    meta,
    width: swap ? storedH : storedW,
    height: swap ? storedW : storedH,
    bitDepth,
    pages,
    inputBytes: st.size,
  };
}

/** Decode a scan into planes. */
export async function decodeImage(file: string, options: DecodeOptions = {}): Promise<DecodedImage> {
  const { page, pixelLimit } = checkOptions(options);
  const probe = await probeImage(file, { page, pixelLimit });
  const { meta, bitDepth } = probe;
  const hasAlpha = Boolean(meta.hasAlpha);
  const isCmyk = meta.space === 'cmyk';
  const isColour =
    isCmyk ||
    meta.space === 'srgb' ||
    meta.space === 'rgb16' ||
    (meta.channels ?? 1) - (hasAlpha ? 1 : 0) >= 3;
  // sharp's 8-bit 'b-w' output drops an alpha band, so 8-bit gray+alpha is read as sRGB (R = G = B = gray,
  // an exact band copy) and bands 0 and 3 are kept.
  const grayAlpha8 = !isColour && hasAlpha && bitDepth === 8;
  const space =
    isColour || grayAlpha8 ? (bitDepth === 16 ? 'rgb16' : 'srgb') : bitDepth === 16 ? 'grey16' : 'b-w';
  let data: Buffer;
  let info: OutputInfo;
  try {
    ({ data, info } = await sharp(file, { limitInputPixels: pixelLimit, failOn: 'error', page })
      .rotate()
      // Keep the embedded ICC profile attached instead of colour-converting to sRGB: samples stay as stored.
      .keepIccProfile()
      .toColourspace(space)
      .raw({ depth: bitDepth === 16 ? 'ushort' : 'uchar' })
      .toBuffer({ resolveWithObject: true }));
  } catch (err) {
    throw describeSharpError(file, err, 'decode');
  }
  const width = info.width;
  const height = info.height;
  const n = width * height;
  if (grayAlpha8) {
    if (info.channels !== 4)
      throw new InputError(file, `gray+alpha decoded to ${info.channels} bands, expected 4`);
    const ga = Buffer.alloc(n * 2);
    for (let i = 0; i < n; i++) {
      ga[2 * i] = data[4 * i];
      ga[2 * i + 1] = data[4 * i + 3];
    }
    data = ga;
    info = { ...info, channels: 2 };
  }
  const channels = info.channels as 1 | 2 | 3 | 4;
  if (data.length !== n * channels * (bitDepth / 8))
    throw new InputError(
      file,
      `decoded to ${data.length} bytes, expected ${n * channels * (bitDepth / 8)}; the file may be corrupt`,
    );
  const planes: Float32Array[] = [];
  for (let c = 0; c < channels; c++) planes.push(new Float32Array(n));
  const hash = createHash('sha256');
  if (bitDepth === 16) {
    const u16 = new Uint16Array(data.buffer, data.byteOffset, data.byteLength / 2);
    for (let i = 0, p = 0; i < n; i++) for (let c = 0; c < channels; c++, p++) planes[c][i] = u16[p];
    hash.update(samplesBigEndian(u16));
  } else {
    for (let i = 0, p = 0; i < n; i++) for (let c = 0; c < channels; c++, p++) planes[c][i] = data[p];
    hash.update(data);
  }
  return {
    file,
    width,
    height,
    channels,
    bitDepth,
    colour: channels >= 3 ? 'rgb' : 'gray',
    hasAlpha: channels === 2 || channels === 4,
    planes,
    meta: {
      format: meta.format ?? 'unknown',
      icc: meta.icc && !isCmyk ? new Uint8Array(meta.icc) : undefined,
      density: meta.density,
      orientation: meta.orientation,
      pages: probe.pages,
      page,
    },
    inputBytes: probe.inputBytes,
    rawBytes: n * channels * (bitDepth / 8),
    sourceSha256: hash.digest('hex'),
  };
}

/** SHA-256 of interleaved samples as the container records it (16-bit big-endian). */
export function hashSamples(planes: ArrayLike<number>[], bitDepth: 8 | 16): string {
  const n = planes[0].length;
  const ch = planes.length;
  const hash = createHash('sha256');
  if (bitDepth === 16) {
    const buf = Buffer.alloc(n * ch * 2);
    for (let i = 0, p = 0; i < n; i++)
      for (let c = 0; c < ch; c++, p += 2) buf.writeUInt16BE(planes[c][i], p);
    hash.update(buf);
  } else {
    const buf = Buffer.alloc(n * ch);
    for (let i = 0, p = 0; i < n; i++) for (let c = 0; c < ch; c++, p++) buf[p] = planes[c][i];
    hash.update(buf);
  }
  return hash.digest('hex');
}

function samplesBigEndian(u16: Uint16Array): Buffer {
  const out = Buffer.alloc(u16.length * 2);
  for (let i = 0; i < u16.length; i++) out.writeUInt16BE(u16[i], i * 2);
  return out;
}

async function statInput(file: string) {
  let st: Awaited<ReturnType<typeof stat>>;
  try {
    st = await stat(file);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') throw new InputError(file, 'no such file', { code });
    if (code === 'EACCES' || code === 'EPERM')
      throw new InputError(file, 'permission denied when reading', { code });
    if (code === 'ENOTDIR')
      throw new InputError(file, 'a part of the path is a file, not a folder', { code });
    throw new InputError(file, `cannot be read (${code ?? String(err)})`, { code });
  }
  if (st.isDirectory()) throw new InputError(file, 'is a folder, not an image file');
  if (!st.isFile()) throw new InputError(file, 'is not a regular file');
  if (st.size === 0) throw new InputError(file, 'is empty (0 bytes)');
  return st;
}

function depthBits(file: string, depth: string | undefined): 8 | 16 {
  if (depth === 'uchar') return 8;
  if (depth === 'ushort') return 16;
  throw new InputError(
    file,
    `has an unsupported sample format "${depth ?? 'unknown'}"; Rankfold reads unsigned 8- and 16-bit integer samples`,
    { depth },
  );
}

/** The format a file's first bytes announce (PNG, TIFF, JPEG, WebP signatures), or undefined. */
export function sniffFormat(head: Uint8Array): string | undefined {
  const at = (i: number, ...b: number[]) => b.every((x, k) => head[i + k] === x);
  if (at(0, 0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a)) return 'PNG';
  if (at(0, 0x49, 0x49, 0x2a, 0x00) || at(0, 0x4d, 0x4d, 0x00, 0x2a)) return 'TIFF';
  if (at(0, 0x49, 0x49, 0x2b, 0x00) || at(0, 0x4d, 0x4d, 0x00, 0x2b)) return 'TIFF';
  if (at(0, 0xff, 0xd8, 0xff)) return 'JPEG';
  if (at(0, 0x52, 0x49, 0x46, 0x46) && at(8, 0x57, 0x45, 0x42, 0x50)) return 'WebP';
  return undefined;
}

function formatOfFile(file: string): string | undefined {
  try {
    const fd = openSync(file, 'r');
    try {
      const head = new Uint8Array(16);
      readSync(fd, head, 0, 16, 0);
      return sniffFormat(head);
    } finally {
      closeSync(fd);
    }
  } catch {
    return undefined;
  }
}

/**
 * Turn a libvips/sharp failure into a sentence naming the file and the problem. libvips keeps one error
 * buffer per process, so while another batch job fails at the same moment its text can be empty
 * ("Unknown error") or another file's; a file whose signature names a format we read therefore gets a
 * message built from that signature alone, the same with 1 job or many.
 */
function describeSharpError(file: string, err: unknown, stage: 'read' | 'decode'): InputError {
  const raw = err instanceof Error ? err.message : String(err);
  const first = raw
    .split('\n')[0]
    .replace(/^Input (file|buffer) /, '')
    .trim();
  if (/pixel limit/i.test(raw)) return new InputError(file, `is over the pixel limit (${first})`);
  const format = formatOfFile(file);
  if (format)
    return new InputError(
      file,
      `cannot be ${stage === 'read' ? 'read' : 'decoded'}: it starts as a ${format} file but the rest is truncated or corrupt`,
    );
  if (/unsupported image format/i.test(raw))
    return new InputError(
      file,
      `is not an image Rankfold can read (unrecognised contents); Rankfold reads ${FORMAT_NAMES}`,
    );
  return new InputError(file, `cannot be ${stage === 'read' ? 'read as an image' : 'decoded'} (${first})`);
}
