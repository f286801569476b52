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
import { constants } from 'node:fs';
import { type FileHandle, open, stat } from 'node:fs/promises';
import sharp, { type Metadata, type OutputInfo } from 'sharp';
import { checkInteger, type DecodedImage, displayName, InputError, type WithWarnings } from '../../contract';
import { keepableMetadata, type MetadataToKeep, readPngMetadata } from './metadata-chunks';

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
      { pixels, pixelLimit },
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
 * is an InputError naming the file.
 */
export async function decodeInterleaved(file: string, options: DecodeOptions = {}): Promise<InterleavedScan> {
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
    let pipeline = sharp(file, { limitInputPixels: pixelLimit, failOn: 'error', page });
    // Only a kept orientation (1–8) is applied; one the probe left out (with a warning) is not.
    if ((probe.keep.orientation ?? 1) !== 1) pipeline = pipeline.rotate();
    ({ data, info } = await pipeline
      // Keep the embedded ICC profile attached instead of colour-converting to sRGB: samples stay as stored.
      .keepIccProfile()
      .toColourspace(space)
      .raw({ depth: bitDepth === 16 ? 'ushort' : 'uchar' })
      .toBuffer({ resolveWithObject: true }));
  } catch (err) {
    throw describeSharpError(file, err, 'decode', sniffFormatOf(meta.format));
  }
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

/** Decode a scan into planes. */
export async function decodeImage(
  file: string,
  options: DecodeOptions = {},
): Promise<DecodedImage & WithWarnings> {
  const scan = await decodeInterleaved(file, options);
  const { data, channels, bitDepth } = scan;
  const n = scan.width * scan.height;
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
  return { ...scanFields(scan, file), planes, sourceSha256: hash.digest('hex') };
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

/** The signature name for a sharp format id, for messages. */
function sniffFormatOf(format: string | undefined): string | undefined {
  return format === 'png'
    ? 'PNG'
    : format === 'tiff'
      ? 'TIFF'
      : format === 'jpeg'
        ? 'JPEG'
        : format === 'webp'
          ? 'WebP'
          : undefined;
}

/** What a path that cannot be opened gets, by errno code (POSIX.1-2017 <errno.h> names, as Node reports them). */
const FS_PROBLEMS: Record<string, string> = {
  ENOENT: 'no such file',
  EACCES: 'permission denied when reading; check that you may read the file and open every folder above it',
  EPERM:
    'permission denied when reading (the operation is not permitted); check the file and the folders above it',
  ELOOP:
    'cannot be opened because its path runs through a loop of symbolic links (or too many links in a row)',
  ENAMETOOLONG:
    'cannot be opened because its name, or the name of a folder in its path, is too long for the file system',
  ENOTDIR: 'cannot be opened because a part of its path is a file, not a folder',
  EISDIR: 'is a folder, not an image file',
  EIO: 'cannot be read because the disk or device reported an input/output error; the medium may be failing',
  ENXIO: 'cannot be opened because the device behind it is not available',
  ENODEV: 'cannot be opened because the device behind it is not available',
  EMFILE: 'cannot be opened because too many files are open at once; try again with fewer jobs',
  ENFILE: 'cannot be opened because too many files are open on this system; try again with fewer jobs',
  ENOMEM: 'cannot be read because the system ran out of memory',
  EOVERFLOW: 'cannot be read because it is too large for this system to open',
  EFBIG: 'cannot be read because it is too large for this system to open',
  EBUSY: 'cannot be opened because it is busy (in use by the system)',
  ETXTBSY: 'cannot be opened because it is busy (in use by the system)',
  ESTALE: 'cannot be read because its network share is no longer available (stale file handle)',
  EAGAIN: 'cannot be read right now (the system asked to try again later)',
  EINVAL: 'cannot be opened because the file system does not accept this name',
  EILSEQ: 'cannot be opened because the file system does not accept the characters in this name',
};

/**
 * Turn a file-system error about `file` into an InputError in the user's words. A name holding U+FFFD
 * that is not found is almost always a name that was not valid UTF-8: Node decodes command-line
 * arguments lossily, so the original bytes are gone and the file cannot be found by this name.
 */
export function describeFileError(file: string, err: unknown): InputError {
  const code = (err as NodeJS.ErrnoException | undefined)?.code;
  if (code === 'ENOENT' && file.includes('\uFFFD'))
    return new InputError(
      file,
      'no such file; its name has bytes that are not valid UTF-8 (shown as �), which are lost before Rankfold sees them, so rename the file with valid characters and try again',
      { code },
    );
  const problem = code ? FS_PROBLEMS[code] : undefined;
  if (problem) return new InputError(file, problem, { code });
  const what = code ? `the system reported error ${code}` : 'the system reported an unknown error';
  return new InputError(file, `cannot be read (${what})`, { code });
}

/**
 * Check that `file` is a regular, non-empty file this process can open and read, and return its size and
 * first bytes. Special files are refused before they are opened (opening a FIFO for reading would block).
 * The file is really opened (not only `access`-checked), so permission problems show up here, by name,
 * and not later as "not an image".
 * @throws InputError naming the file and the problem.
 */
export async function openInput(file: string): Promise<{ size: number; head: Uint8Array }> {
  let st: Awaited<ReturnType<typeof stat>>;
  try {
    st = await stat(file);
  } catch (err) {
    throw describeFileError(file, err);
  }
  if (st.isDirectory()) throw new InputError(file, 'is a folder, not an image file');
  if (st.isFIFO()) throw new InputError(file, 'is a named pipe (FIFO), not an image file');
  if (st.isSocket()) throw new InputError(file, 'is a socket, not an image file');
  if (st.isCharacterDevice() || st.isBlockDevice())
    throw new InputError(file, 'is a device, not an image file');
  if (!st.isFile()) throw new InputError(file, 'is not a regular file');
  if (st.size === 0) throw new InputError(file, 'is empty (0 bytes)');
  let fh: FileHandle | undefined;
  try {
    fh = await open(file, constants.O_RDONLY);
    const head = new Uint8Array(64);
    const { bytesRead } = await fh.read(head, 0, head.length, 0);
    return { size: st.size, head: head.subarray(0, bytesRead) };
  } catch (err) {
    throw describeFileError(file, err);
  } finally {
    await fh?.close().catch(() => undefined);
  }
}

/** The tags of one TIFF image directory that decide whether Rankfold can read it (TIFF 6.0). */
export interface TiffFacts {
  /** Tag 262 PhotometricInterpretation (undefined when absent). */
  photometric?: number;
  /** Tag 277 SamplesPerPixel (default 1). */
  samplesPerPixel: number;
  /** Tag 258 BitsPerSample (default [1]). */
  bitsPerSample: number[];
  /** Tag 339 SampleFormat (default [1] = unsigned integer). */
  sampleFormat: number[];
  /** Tag 274 Orientation (undefined when absent). */
  orientation?: number;
}

/**
 * Read tags 258, 262, 274, 277 and 339 of IFD `page` of a classic TIFF (TIFF 6.0 §2: header, IFD entries of
 * 12 bytes, values in the entry when they fit in 4 bytes). BigTIFF and anything odd give undefined, and
 * the file is left to libvips.
 */
export async function readTiffFacts(file: string, page = 0): Promise<TiffFacts | undefined> {
  const fh = await open(file, 'r');
  try {
    const { size } = await fh.stat();
    const read = async (at: number, n: number) => {
      if (at < 0 || at + n > size) throw new RangeError('outside the file');
      const b = Buffer.alloc(n);
      await fh.read(b, 0, n, at);
      return b;
    };
    const h = await read(0, 8);
    const order = h.toString('latin1', 0, 2);
    if (order !== 'II' && order !== 'MM') return undefined;
    const le = order === 'II';
    const u16 = (b: Buffer, o: number) => (le ? b.readUInt16LE(o) : b.readUInt16BE(o));
    const u32 = (b: Buffer, o: number) => (le ? b.readUInt32LE(o) : b.readUInt32BE(o));
    if (u16(h, 2) !== 42) return undefined;
    let ifd = u32(h, 4);
    const seen = new Set<number>();
    for (let p = 0; p < page; p++) {
      if (seen.has(ifd)) return undefined;
      seen.add(ifd);
      const n = u16(await read(ifd, 2), 0);
      ifd = u32(await read(ifd + 2 + 12 * n, 4), 0);
      if (ifd === 0) return undefined;
    }
    const count = u16(await read(ifd, 2), 0);
    if (count === 0 || count > 4096) return undefined;
    const entries = await read(ifd + 2, 12 * count);
    const facts: TiffFacts = { samplesPerPixel: 1, bitsPerSample: [1], sampleFormat: [1] };
    for (let i = 0; i < count; i++) {
      const e = 12 * i;
      const tag = u16(entries, e);
      if (tag !== 258 && tag !== 262 && tag !== 274 && tag !== 277 && tag !== 339) continue;
      const type = u16(entries, e + 2);
      const n = Math.min(u32(entries, e + 4), 64);
      const width = type === 3 ? 2 : type === 4 ? 4 : type === 1 ? 1 : 0;
      if (width === 0 || n === 0) continue;
      const data =
        n * width <= 4 ? entries.subarray(e + 8, e + 12) : await read(u32(entries, e + 8), n * width);
      const values = Array.from({ length: n }, (_, k) =>
        width === 2 ? u16(data, 2 * k) : width === 4 ? u32(data, 4 * k) : data[k],
      );
      if (tag === 258) facts.bitsPerSample = values;
      else if (tag === 262) facts.photometric = values[0];
      else if (tag === 274) facts.orientation = values[0];
      else if (tag === 277) facts.samplesPerPixel = values[0];
      else facts.sampleFormat = values;
    }
    return facts;
  } finally {
    await fh.close();
  }
}

/** TIFF PhotometricInterpretation values Rankfold does not read, by name (TIFF 6.0 §§3–23; TIFF/EP; DNG 1.6). */
const PHOTOMETRIC_NAMES: Record<number, string> = {
  4: 'a transparency mask',
  8: 'a CIELab TIFF',
  9: 'an ICC-Lab TIFF (CIELab)',
  10: 'an ITU-Lab TIFF (CIELab)',
  32803: 'a colour-filter-array (raw sensor) TIFF',
  32844: 'a LogL TIFF',
  32845: 'a LogLuv TIFF',
  34892: 'a linear-raw TIFF',
  51177: 'a depth-map TIFF',
};

const READS = 'Rankfold reads grey, grey+alpha, RGB, RGBA, palette, YCbCr and CMYK scans';

/** Refuse, by name, what the TIFF tags say Rankfold cannot read. */
function refuseTiffModel(file: string, f: TiffFacts): void {
  const pi = f.photometric;
  if (pi !== undefined && PHOTOMETRIC_NAMES[pi])
    throw new InputError(
      file,
      `is ${PHOTOMETRIC_NAMES[pi]}; ${READS}, so convert it (for example to RGB) first`,
      { photometric: pi },
    );
  if (pi !== undefined && ![0, 1, 2, 3, 5, 6].includes(pi))
    throw new InputError(
      file,
      `uses a colour model Rankfold does not know (TIFF photometric interpretation ${pi}); ${READS}`,
      { photometric: pi },
    );
  const format = f.sampleFormat[0] ?? 1;
  const bits = f.bitsPerSample[0] ?? 1;
  if (format === 3 || format === 2 || format >= 5 || (format === 1 && bits === 32)) {
    const name = sampleFormatName(format, bits);
    throw new InputError(file, `has an unsupported sample format "${name.id}" (${name.words}); ${SAMPLES}`, {
      depth: name.id,
    });
  }
  if (f.bitsPerSample.some((b) => b !== bits))
    throw new InputError(
      file,
      `has samples of different bit depths (${f.bitsPerSample.join(', ')}); Rankfold reads images whose samples all have the same depth`,
    );
  if (![1, 2, 4, 8, 16].includes(bits))
    throw new InputError(file, `has ${bits}-bit samples; Rankfold reads 1-, 2-, 4-, 8- and 16-bit samples`, {
      bits,
    });
  // libtiff 4.7.2 (observed here) treats an Orientation outside 1–8 as an error while reading pixels, so it cannot be
  // dropped with a warning as for PNG and JPEG: it is named instead of being called damage.
  if (f.orientation !== undefined && !(f.orientation >= 1 && f.orientation <= 8))
    throw new InputError(
      file,
      `has an invalid orientation tag (${f.orientation}; TIFF 6.0 allows 1–8) that the TIFF reader refuses, so remove or correct the tag and try again`,
      { orientation: f.orientation },
    );
  const spp = f.samplesPerPixel;
  const most = pi === 5 ? 5 : pi === 2 || pi === 6 ? 4 : 2;
  if (spp > most)
    throw new InputError(file, `has ${spp} samples per pixel (a multiband image); ${READS}`, {
      samplesPerPixel: spp,
    });
}

const SAMPLES = 'Rankfold reads unsigned 8- and 16-bit integer samples';

function sampleFormatName(format: number, bits: number): { id: string; words: string } {
  if (format === 3)
    return bits === 64
      ? { id: 'double', words: '64-bit floating-point samples' }
      : { id: 'float', words: `${bits}-bit floating-point samples` };
  if (format === 2)
    return {
      id: bits <= 8 ? 'char' : bits <= 16 ? 'short' : 'int',
      words: `signed ${bits}-bit integer samples`,
    };
  if (format >= 5) return { id: 'complex', words: 'complex-number samples' };
  return { id: 'uint', words: `unsigned ${bits}-bit integer samples` };
}

/** Refuse, by name, colour models libvips reports that Rankfold does not read (any format). */
function refuseColourModel(file: string, meta: Metadata): void {
  const channels = meta.channels ?? 1;
  if (meta.space === 'multiband' || meta.space === 'labs' || meta.space === 'lab' || meta.space === 'labq')
    throw new InputError(
      file,
      meta.space === 'multiband'
        ? `has ${channels} band(s) in a colour model Rankfold does not know; ${READS}`
        : `is a CIELab image; ${READS}, so convert it (for example to RGB) first`,
      { space: meta.space },
    );
  if (channels > (meta.space === 'cmyk' ? 5 : 4))
    throw new InputError(file, `has ${channels} samples per pixel (a multiband image); ${READS}`, {
      channels,
    });
}

const DEPTH_WORDS: Record<string, string> = {
  char: 'signed 8-bit integer samples',
  short: 'signed 16-bit integer samples',
  uint: 'unsigned 32-bit integer samples',
  int: 'signed 32-bit integer samples',
  float: 'floating-point samples',
  double: '64-bit floating-point samples',
  complex: 'complex-number samples',
  dpcomplex: 'complex-number samples',
};

function depthBits(file: string, meta: Metadata): 8 | 16 {
  const depth = meta.depth;
  if (depth === 'uchar') return 8;
  if (depth === 'ushort') return 16;
  const words =
    depth === 'float' && meta.bitsPerSample
      ? `${meta.bitsPerSample}-bit floating-point samples`
      : DEPTH_WORDS[depth ?? ''];
  throw new InputError(
    file,
    `has an unsupported sample format "${depth ?? 'unknown'}"${words ? ` (${words})` : ''}; ${SAMPLES}`,
    { depth },
  );
}

/**
 * Turn a libvips/sharp failure into a sentence naming the file and the problem. libvips keeps one error
 * buffer per process, so while another batch job fails at the same moment its text can be empty
 * ("Unknown error") or another file's; a file whose signature names a format we read therefore gets a
 * message built from that signature alone, the same with 1 job or many. Decoder text never reaches the
 * message: it names library internals, not the user's problem.
 */
function describeSharpError(
  file: string,
  err: unknown,
  stage: 'read' | 'decode',
  signature: string | undefined,
): InputError {
  const raw = err instanceof Error ? err.message : String(err);
  // sharp's own checks (its C++ pipeline, not the shared libvips buffer), so the text is reliable.
  if (/exceeds pixel limit/i.test(raw))
    return new InputError(file, 'is over the pixel limit; raise it with --pixel-limit');
  if (/exceeds channel limit/i.test(raw))
    return new InputError(
      file,
      `has more samples per pixel than Rankfold reads (a multiband image); ${READS}`,
    );
  if (signature)
    return new InputError(
      file,
      `cannot be ${stage === 'read' ? 'read' : 'decoded'}: it starts as a ${signature} file but the rest is truncated or corrupt`,
    );
  if (/unsupported image format/i.test(raw))
    return new InputError(
      file,
      `is not an image Rankfold can read (unrecognised contents); Rankfold reads ${FORMAT_NAMES}`,
    );
  return new InputError(
    file,
    `is not an image Rankfold can read (its contents could not be decoded); Rankfold reads ${FORMAT_NAMES}`,
  );
}
