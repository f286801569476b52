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
 * - Every failure is an InputError whose message is one sentence naming the file (as given) and the
 *   problem in a user's words: file-system problems by name, colour models and sample formats Rankfold
 *   does not read by name, damaged files by the format their first bytes announce. No decoder text.
 * - Metadata the container or the PNG/TIFF writers cannot hold (a resolution outside 0–10^6 dpi, an
 *   orientation outside 1–8, a damaged ICC profile) is left out with a warning (`warnings`).
 * - A grey PNG's ICC profile is read from its iCCP chunk by hand, so a profile libpng refuses to report
 *   (an RGB profile on a grey image) is kept byte for byte, as for TIFF.
 */
import { createHash } from 'node:crypto';
import sharp, { type Metadata, type OutputInfo } from 'sharp';
import {
  checkInteger,
  type DecodedImage,
  displayName,
  hinted,
  InputError,
  type WithWarnings,
} from '../../contract';
import { sharedFloat32 } from '../../engine/lowrank/decode-image';
import { keepableMetadata, type MetadataToKeep, readPngMetadata } from './metadata-chunks';
import { openInput, sniffFormat, sniffFormatOf } from './open-file';
import { planesWhileDecoding } from './planes-ahead';
import type { Prefault } from './prefault';
import {
  depthBits,
  describeSharpError,
  FORMAT_NAMES,
  isColourScan,
  NOT_AN_IMAGE,
  refuseColourModel,
  refuseTiffModel,
} from './refusals';
import { readTiffFacts } from './tiff-tags';

/** Default pixel limit: 2^28 ≈ 268 megapixels, sharp's own default for `limitInputPixels`. */
export const DEFAULT_PIXEL_LIMIT = 268_402_689;

export interface DecodeOptions {
  /** TIFF page (0-based). Default 0. */
  page?: number;
  /** Refuse images with more pixels than this (sharp's `limitInputPixels`). Default {@link DEFAULT_PIXEL_LIMIT}. */
  pixelLimit?: number;
  /**
   * Decode only this rectangle of the upright scan (after EXIF orientation), with sharp's `extract`: the same
   * samples as cropping the whole decoded scan, without holding the whole scan. The hash covers the rectangle.
   */
  region?: Region;
  /** This file's probe with the same `page` and `pixelLimit`, if the caller has made it: not read again. */
  probe?: ProbeResult;
  /** decodeImage: touch the planes' pages on a pool thread while sharp decodes (./prefault); for a spare core. */
  prefault?: boolean;
}

/** A rectangle of a scan, in upright pixels. */
interface Region {
  left: number;
  top: number;
  width: number;
  height: number;
}

const SUPPORTED = new Set(['png', 'tiff', 'jpeg', 'webp']);

/** Header facts about a scan, without decoding its pixels. */
export interface ProbeResult {
  /**
   * sharp's header metadata, except that `icc`, `density` and `orientation` are replaced by the values
   * Rankfold keeps (`keep`), so a reader built on the probe never carries an unwritable value on.
   */
  meta: Metadata;
  /** Upright size (after EXIF orientation). */
  width: number;
  height: number;
  bitDepth: 8 | 16;
  pages: number;
  inputBytes: number;
  /** The ICC profile, resolution and orientation Rankfold keeps (see `keepableMetadata`). */
  keep: MetadataToKeep;
  /** Metadata left out, one sentence each naming the file. */
  warnings: string[];
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
  const input = await openInput(file);
  const signature = sniffFormat(input.head);
  // TIFF tags first: colour models and sample formats libvips cannot read (or reads as something else)
  // are refused by name rather than reported as damage.
  if (signature === 'TIFF') {
    const facts = await readTiffFacts(file, page).catch(() => undefined);
    if (facts) refuseTiffModel(file, facts);
  }
  let meta: Metadata;
  try {
    meta = await sharp(file, { limitInputPixels: false, failOn: 'error' }).metadata();
  } catch (err) {
    throw describeSharpError(file, err, 'read', signature);
  }
  if (!meta.format || !SUPPORTED.has(meta.format))
    throw new InputError(
      file,
      `is in an unsupported format ("${meta.format ?? 'unknown'}"); Rankfold reads ${FORMAT_NAMES}`,
      { format: meta.format, ...NOT_AN_IMAGE },
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
      throw describeSharpError(file, err, 'read', signature);
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
      { pixels, pixelLimit, ...hinted('pixel-limit', '; raise it with --pixel-limit') },
    );
  refuseColourModel(file, meta);
  const bitDepth = depthBits(file, meta);
  const warnings: string[] = [];
  let icc: Uint8Array | undefined = meta.icc ? new Uint8Array(meta.icc) : undefined;
  let density = meta.density;
  if (meta.format === 'png') {
    const own = await readPngMetadata(file).catch(() => undefined);
    if (own?.icc) icc = own.icc;
    else if (own?.iccProblem)
      warnings.push(
        `${displayName(file)}: its embedded ICC profile ${own.iccProblem}, so it is left out and the pixels are kept`,
      );
    // libvips reports 72 dpi when a PNG states no resolution; a resolution the file does not state is not kept.
    if (own && !own.hasPhys) density = undefined;
  }
  // CMYK sources are converted to sRGB; their CMYK profile no longer describes the samples.
  if (meta.space === 'cmyk') icc = undefined;
  const kept = keepableMetadata(file, { icc, density, orientation: meta.orientation }, 'source');
  warnings.push(...kept.warnings);
  const swap = (kept.meta.orientation ?? 1) >= 5;
  return {
    meta: {
      ...meta,
      icc: kept.meta.icc ? Buffer.from(kept.meta.icc) : undefined,
      density: kept.meta.density,
      orientation: kept.meta.orientation,
    },
    width: swap ? storedH : storedW,
    height: swap ? storedW : storedH,
    bitDepth,
    pages,
    inputBytes: input.size,
    keep: kept.meta,
    warnings,
  };
}

/** A decoded scan as sharp hands it over: interleaved samples, `channels` per pixel, plus what to keep. */
export interface InterleavedScan {
  probe: ProbeResult;
  /** Interleaved samples: bytes for 8-bit, native-endian 16-bit words for 16-bit. */
  data: Buffer;
  width: number;
  height: number;
  channels: 1 | 2 | 3 | 4;
  bitDepth: 8 | 16;
  meta: DecodedImage['meta'];
}

/**
 * The one decoding pipeline behind `decodeImage` (float planes) and `decodeSamples` (integer planes, for
 * large scans): probe, one sharp pipeline, the band and length checks, the metadata to keep. Every failure
 * is an InputError naming the file. `meanwhile` starts once sharp decodes, given the size the header promises
 * (pixels, of the region if any; channels after decoding); it is finished (or, if the decode fails, stopped).
 */
export async function decodeInterleaved(
  file: string,
  options: DecodeOptions = {},
  meanwhile?: (expected: { pixels: number; channels: number }) => Prefault,
): Promise<InterleavedScan> {
  const { page, pixelLimit } = checkOptions(options);
  const probe = options.probe ?? (await probeImage(file, { page, pixelLimit }));
  const region = options.region && checkRegion(options.region, probe);
  const { meta, bitDepth } = probe;
  const hasAlpha = Boolean(meta.hasAlpha);
  const isColour = isColourScan(meta);
  // sharp's 8-bit 'b-w' output drops an alpha band, so 8-bit gray+alpha is read as sRGB (R = G = B = gray,
  // an exact band copy) and bands 0 and 3 are kept.
  const grayAlpha8 = !isColour && hasAlpha && bitDepth === 8;
  const space =
    isColour || grayAlpha8 ? (bitDepth === 16 ? 'rgb16' : 'srgb') : bitDepth === 16 ? 'grey16' : 'b-w';
  let data: Buffer;
  let info: OutputInfo;
  let alongside: Prefault | undefined;
  try {
    let pipeline = sharp(file, { limitInputPixels: pixelLimit, failOn: 'error', page });
    // Only a kept orientation (1–8) is applied; one the probe left out (with a warning) is not.
    if ((probe.keep.orientation ?? 1) !== 1) pipeline = pipeline.rotate();
    if (region) pipeline = pipeline.extract(region);
    const decoding = pipeline
      // Keep the embedded ICC profile attached instead of colour-converting to sRGB: samples stay as stored.
      .keepIccProfile()
      .toColourspace(space)
      .raw({ depth: bitDepth === 16 ? 'ushort' : 'uchar' })
      .toBuffer({ resolveWithObject: true });
    alongside = meanwhile?.({
      pixels: region ? region.width * region.height : probe.width * probe.height,
      channels: (isColour ? 3 : 1) + (hasAlpha ? 1 : 0),
    });
    ({ data, info } = await decoding);
  } catch (err) {
    await alongside?.stop();
    throw describeSharpError(file, err, 'decode', sniffFormatOf(meta.format));
  }
  await alongside?.finish();
  const width = info.width;
  const height = info.height;
  const n = width * height;
  if (grayAlpha8) {
    if (info.channels !== 4)
      throw new InputError(
        file,
        `decoded to ${info.channels} colour bands instead of grey plus alpha; the file may be corrupt`,
      );
    const ga = Buffer.alloc(n * 2);
    for (let i = 0; i < n; i++) {
      ga[2 * i] = data[4 * i];
      ga[2 * i + 1] = data[4 * i + 3];
    }
    data = ga;
    info = { ...info, channels: 2 };
  }
  if (![1, 2, 3, 4].includes(info.channels))
    throw new InputError(
      file,
      `has ${info.channels} colour bands after decoding; Rankfold reads grey, grey+alpha, RGB and RGBA (and converts CMYK)`,
    );
  const channels = info.channels as 1 | 2 | 3 | 4;
  if (data.length !== n * channels * (bitDepth / 8))
    throw new InputError(
      file,
      `decoded to ${data.length} bytes, expected ${n * channels * (bitDepth / 8)}; the file may be corrupt`,
    );
  return {
    probe,
    data,
    width,
    height,
    channels,
    bitDepth,
    meta: {
      format: meta.format ?? 'unknown',
      icc: probe.keep.icc,
      density: probe.keep.density,
      orientation: probe.keep.orientation,
      pages: probe.pages,
      page,
    },
  };
}

/** A region inside the upright scan, in whole pixels. @throws the contract's parameter error naming the field. */
function checkRegion(r: Region, probe: ProbeResult): Region {
  const left = checkInteger('region.left', r.left, 0, probe.width - 1);
  const top = checkInteger('region.top', r.top, 0, probe.height - 1);
  const width = checkInteger('region.width', r.width, 1, probe.width - left);
  const height = checkInteger('region.height', r.height, 1, probe.height - top);
  return { left, top, width, height };
}

/** The fields every decoded scan carries besides its planes and hash. */
export function scanFields(scan: InterleavedScan, file: string) {
  const { width, height, channels, bitDepth, probe } = scan;
  return {
    file,
    width,
    height,
    channels,
    bitDepth,
    colour: (channels >= 3 ? 'rgb' : 'gray') as 'rgb' | 'gray',
    hasAlpha: channels === 2 || channels === 4,
    meta: scan.meta,
    inputBytes: probe.inputBytes,
    rawBytes: width * height * channels * (bitDepth / 8),
    ...(probe.warnings.length > 0 ? { warnings: probe.warnings } : {}),
  };
}

/**
 * Decode a scan into planes, in shared memory: the encoder's second thread reads them without a copy
 * (engine/lowrank/side-jobs). With `prefault` they are allocated and touched while sharp decodes (./prefault), so
 * the deinterleave writes to memory already present; should the decoded size differ from the header's, fresh ones.
 */
export async function decodeImage(
  file: string,
  options: DecodeOptions = {},
): Promise<DecodedImage & WithWarnings> {
  const held: { planes?: Float32Array[] } = {};
  type Shape = { pixels: number; channels: number };
  const touch = options.prefault ? (shape: Shape) => planesWhileDecoding(held, shape) : undefined;
  const scan = await decodeInterleaved(file, options, touch);
  const { data, channels, bitDepth } = scan;
  const n = scan.width * scan.height;
  const early = held.planes;
  const planes = early?.length === channels && early[0].length === n ? early : [];
  while (planes.length < channels) planes.push(sharedFloat32(n));
  const samples = sampleWords(data, bitDepth);
  deinterleave(samples, planes, n);
  return { ...scanFields(scan, file), planes, sourceSha256: hashInterleaved(samples) };
}

/** sharp's raw output as samples: its bytes for 8-bit, native-endian 16-bit words for 16-bit (no copy). */
export function sampleWords(data: Buffer, bitDepth: 8 | 16): Uint8Array | Uint16Array {
  return bitDepth === 16
    ? new Uint16Array(data.buffer, data.byteOffset, data.byteLength / 2)
    : new Uint8Array(data.buffer, data.byteOffset, data.byteLength);
}

/**
 * Interleaved samples (`planes.length` per pixel) into one plane per channel, a channel at a time. A grey
 * scan is one `set` (Node 20.20: about twice as fast as the loop on warm pages, measured on 8.25 MP; the
 * plane's first touch costs the same either way); interleaved channels take a plain loop.
 */
function deinterleave(samples: Uint8Array | Uint16Array, planes: Float32Array[], n: number): void {
  const channels = planes.length;
  if (channels === 1) {
    planes[0].set(samples);
    return;
  }
  for (let c = 0; c < channels; c++) {
    const p = planes[c];
    for (let i = 0, q = c; i < n; i++, q += channels) p[i] = samples[q];
  }
}

/** Pixels hashed at a time (a scratch buffer of this many pixels, not a full interleaved copy). */
const HASH_CHUNK = 1 << 20;

/**
 * SHA-256 (hex) of interleaved samples as the container records it: 8-bit as they are, 16-bit big-endian.
 */
export function hashInterleaved(samples: Uint8Array | Uint16Array): string {
  if (samples instanceof Uint8Array) return createHash('sha256').update(samples).digest('hex');
  return hashSamples([samples], 16);
}

/**
 * SHA-256 (hex) of planes interleaved as the container records them (16-bit big-endian), interleaved a chunk
 * of {@link HASH_CHUNK} pixels at a time.
 */
export function hashSamples(planes: ArrayLike<number>[], bitDepth: 8 | 16): string {
  const n = planes[0].length;
  const ch = planes.length;
  const hash = createHash('sha256');
  const buf = Buffer.alloc(Math.min(HASH_CHUNK, n) * ch * (bitDepth / 8));
  for (let start = 0; start < n; start += HASH_CHUNK) {
    const end = Math.min(n, start + HASH_CHUNK);
    let p = 0;
    if (bitDepth === 16)
      for (let i = start; i < end; i++)
        for (let c = 0; c < ch; c++, p += 2) buf.writeUInt16BE(planes[c][i], p);
    else for (let i = start; i < end; i++) for (let c = 0; c < ch; c++, p++) buf[p] = planes[c][i];
    hash.update(buf.subarray(0, p));
  }
  return hash.digest('hex');
}
