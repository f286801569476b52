/**
 * Decode a scan through sharp (libvips) into per-channel Float32 planes plus the metadata that
 * `expand` writes back. EXIF orientation is applied; 16-bit stays 16-bit.
 */
import { createHash } from 'node:crypto';
import { stat } from 'node:fs/promises';
import sharp, { type Metadata, type OutputInfo } from 'sharp';
import { type DecodedImage, InputError } from '../../contract';

/** Default pixel limit: 2^28 ≈ 268 megapixels, sharp's own default for `limitInputPixels`. */
export const DEFAULT_PIXEL_LIMIT = 268_402_689;

export interface DecodeOptions {
  /** TIFF page (0-based). Default 0. */
  page?: number;
  /** Refuse images with more pixels than this (sharp's `limitInputPixels`). */
  pixelLimit?: number;
}

const SUPPORTED = new Set(['png', 'tiff', 'jpeg', 'webp']);

/** Read the header only: format, size, depth, pages. Throws InputError naming the file. */
export async function probeImage(file: string, options: DecodeOptions = {}) {
  const st = await statInput(file);
  const limit = options.pixelLimit ?? DEFAULT_PIXEL_LIMIT;
  let meta: Metadata;
  try {
    meta = await sharp(file, { limitInputPixels: false, failOn: 'error', page: options.page ?? 0 }).metadata();
  } catch (err) {
    throw new InputError(file, `not a readable image (${cleanSharpMessage(err)})`);
  }
  if (!meta.format || !SUPPORTED.has(meta.format))
    throw new InputError(file, `unsupported format "${meta.format ?? 'unknown'}"; Rankfold reads PNG, TIFF, JPEG and WebP`);
  const pages = meta.pages ?? 1;
  if ((options.page ?? 0) >= pages)
    throw new InputError(file, `has ${pages} page${pages === 1 ? '' : 's'}; page ${options.page} does not exist (pages count from 0)`);
  const width = meta.width ?? 0;
  const height = meta.height ?? 0;
  if (width * height > limit)
    throw new InputError(
      file,
      `is ${width}×${height} = ${width * height} pixels, over the pixel limit of ${limit} (sharp limitInputPixels); raise it with --pixel-limit`,
    );
  const bitDepth = depthBits(file, meta.depth);
  return { meta, width, height, bitDepth, pages, inputBytes: st.size };
}

/** Decode a scan into planes. */
export async function decodeImage(file: string, options: DecodeOptions = {}): Promise<DecodedImage> {
  const page = options.page ?? 0;
  const probe = await probeImage(file, options);
  const { meta, bitDepth } = probe;
  const hasAlpha = Boolean(meta.hasAlpha);
  const isColour = (meta.channels ?? 1) - (hasAlpha ? 1 : 0) >= 3;
  let img = sharp(file, { limitInputPixels: options.pixelLimit ?? DEFAULT_PIXEL_LIMIT, failOn: 'error', page }).rotate();
  const space = isColour ? (bitDepth === 16 ? 'rgb16' : 'srgb') : bitDepth === 16 ? 'grey16' : 'b-w';
  img = img.toColourspace(space);
  let data: Buffer;
  let info: OutputInfo;
  try {
    ({ data, info } = await img.raw({ depth: bitDepth === 16 ? 'ushort' : 'uchar' }).toBuffer({ resolveWithObject: true }));
  } catch (err) {
    throw new InputError(file, `cannot be decoded (${cleanSharpMessage(err)})`);
  }
  const channels = info.channels as 1 | 2 | 3 | 4;
  const width = info.width;
  const height = info.height;
  const n = width * height;
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
      icc: meta.icc ? new Uint8Array(meta.icc) : undefined,
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
    for (let i = 0, p = 0; i < n; i++) for (let c = 0; c < ch; c++, p += 2) buf.writeUInt16BE(planes[c][i], p);
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
    if (code === 'ENOENT') throw new InputError(file, 'no such file');
    if (code === 'EACCES' || code === 'EPERM') throw new InputError(file, 'permission denied when reading');
    throw new InputError(file, `cannot be read (${code ?? String(err)})`);
  }
  if (st.isDirectory()) throw new InputError(file, 'is a folder, not an image file');
  if (st.size === 0) throw new InputError(file, 'is empty (0 bytes)');
  return st;
}

function depthBits(file: string, depth: string | undefined): 8 | 16 {
  if (depth === 'uchar' || depth === 'char') return 8;
  if (depth === 'ushort' || depth === 'short') return 16;
  throw new InputError(file, `has an unsupported sample format "${depth ?? 'unknown'}"; Rankfold reads 8- and 16-bit integer samples`);
}

function cleanSharpMessage(err: unknown): string {
  const m = err instanceof Error ? err.message : String(err);
  return m.split('\n')[0].replace(/^Input file /, '').replace(/^Input buffer /, '').trim();
}
