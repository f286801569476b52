/**
 * Write planes back to PNG or TIFF through sharp (libvips), 8 or 16 bits, with metadata restored.
 *
 * What each format keeps (see docs/cli.md, inspect, "Output files"):
 * - **PNG**: 8/16-bit gray, gray+alpha, RGB, RGBA (lossless, zlib). ICC profile as iCCP; DPI as pHYs,
 *   which stores whole pixels per metre, so DPI comes back to within ±0.0013 dpi (300 → 11811 px/m →
 *   299.9994); orientation as an eXIf chunk (PNG Third Edition; honoured by libvips, browsers and most
 *   current viewers, ignored by some older ones — pass `orientation: 'upright'` for those).
 * - **TIFF**: the same channel layouts and depths, deflate with horizontal predictor (lossless). ICC profile as
 *   tag 34675, DPI as XResolution/YResolution (rational, inch), orientation as tag 274. TIFF 6.0 makes
 *   orientations other than 1 optional for readers; again `orientation: 'upright'` avoids relying on it.
 *
 * Orientation: decoded planes are upright (EXIF orientation applied). With the default `'restore'` the
 * writer turns the pixels back into the source's stored layout and writes the source's orientation tag,
 * so the file is laid out as the original was and displays the same. `'upright'` writes the upright
 * pixels with no orientation tag.
 */
import sharp from 'sharp';
import { type ImageMeta, invalidParameterError, OutputError, UsageError } from '../../contract';
import { assertWritable, writeFileAtomic } from '../io/atomic';
import { addPngMetadata, addTiffMetadata } from './metadata-chunks';
import { type Orientation, swapsAxes, toStored } from './orientation';

export type OutputFormat = 'png' | 'tiff';

/** Pixels to write: one plane per channel (Y[,A] or R,G,B[,A]), row-major, on the 0–255 or 0–65535 scale. */
export interface EncodeInput {
  width: number;
  height: number;
  channels: 1 | 2 | 3 | 4;
  bitDepth: 8 | 16;
  planes: ArrayLike<number>[];
  /** ICC profile, density (DPI) and EXIF orientation to write back. `format`, `pages`, `page` are ignored. */
  meta?: Partial<ImageMeta>;
}

export interface EncodeOptions {
  /** Output format. Default: from the file extension (.png → png; .tif/.tiff → tiff). Required for buffers. */
  format?: OutputFormat;
  /** Replace an existing file. Default false: an existing output is an OutputError naming the file. */
  force?: boolean;
  /** `'restore'` (default) writes the source's stored layout and orientation tag; `'upright'` writes upright pixels, no tag. */
  orientation?: 'restore' | 'upright';
  /** zlib level for PNG and TIFF deflate, 0–9. Default 6. */
  compressionLevel?: number;
}

export interface EncodeResult {
  file: string;
  format: OutputFormat;
  /** Bytes written. */
  bytes: number;
}

/** Pick the format from a file name: .png → png, .tif/.tiff → tiff; anything else is a UsageError. */
export function formatFromPath(file: string): OutputFormat {
  const m = /\.([^./\\]+)$/.exec(file);
  const ext = m ? m[1].toLowerCase() : '';
  if (ext === 'png') return 'png';
  if (ext === 'tif' || ext === 'tiff') return 'tiff';
  throw new UsageError(
    `${file}: cannot tell the output format from the extension "${ext ? `.${ext}` : '(none)'}"; use .png, .tif or .tiff`,
  );
}

/**
 * Round (half away from zero) and clamp samples to 0…2^bitDepth−1 and interleave them.
 * @throws UsageError naming the plane and index of the first non-finite sample.
 */
export function quantiseInterleave(img: EncodeInput): Uint8Array | Uint16Array {
  const n = img.width * img.height;
  const ch = img.channels;
  const max = img.bitDepth === 16 ? 65535 : 255;
  const out = img.bitDepth === 16 ? new Uint16Array(n * ch) : new Uint8Array(n * ch);
  for (let c = 0; c < ch; c++) {
    const p = img.planes[c];
    for (let i = 0; i < n; i++) {
      const v = p[i];
      if (!Number.isFinite(v))
        throw new UsageError(`sample ${i} of plane ${c} is ${v}, not a finite number; nothing was written`, {
          plane: c,
          index: i,
        });
      out[i * ch + c] = v <= 0 ? 0 : v >= max ? max : Math.round(v);
    }
  }
  return out;
}

function validateInput(img: EncodeInput): void {
  if (!Number.isInteger(img.width) || img.width < 1 || img.width > 0x7fffffff)
    throw invalidParameterError('width', 'integer between 1 and 2147483647', img.width);
  if (!Number.isInteger(img.height) || img.height < 1 || img.height > 0x7fffffff)
    throw invalidParameterError('height', 'integer between 1 and 2147483647', img.height);
  if (![1, 2, 3, 4].includes(img.channels))
    throw invalidParameterError('channels', 'one of 1, 2, 3, 4', img.channels);
  if (img.bitDepth !== 8 && img.bitDepth !== 16)
    throw invalidParameterError('bitDepth', 'one of 8, 16', img.bitDepth);
  if (!Array.isArray(img.planes) || img.planes.length !== img.channels)
    throw invalidParameterError(
      'planes',
      `a list of ${img.channels} planes (one per channel)`,
      img.planes?.length,
    );
  const n = img.width * img.height;
  img.planes.forEach((p, c) => {
    if (!p || p.length !== n)
      throw invalidParameterError(`planes[${c}]`, `${n} samples (${img.width}×${img.height})`, p?.length);
  });
  const o = img.meta?.orientation;
  if (o !== undefined && !(Number.isInteger(o) && o >= 1 && o <= 8))
    throw invalidParameterError('meta.orientation', 'integer between 1 and 8', o);
  const d = img.meta?.density;
  if (d !== undefined && !(Number.isFinite(d) && d > 0 && d <= 1e6))
    throw invalidParameterError('meta.density', 'number of pixels per inch between 0 and 1000000', d);
}

/**
 * Encode planes to PNG or TIFF bytes, with ICC profile, DPI and orientation where given.
 * @example const png = await encodeImageBuffer({ width, height, channels: 1, bitDepth: 8, planes: [y] }, { format: 'png' });
 * @throws UsageError for inconsistent input (sizes, channels, non-finite samples) or a missing format.
 */
export async function encodeImageBuffer(img: EncodeInput, options: EncodeOptions = {}): Promise<Buffer> {
  validateInput(img);
  const format = options.format;
  if (format !== 'png' && format !== 'tiff')
    throw invalidParameterError('format', 'one of png, tiff', format);
  const level = options.compressionLevel ?? 6;
  if (!(Number.isInteger(level) && level >= 0 && level <= 9))
    throw invalidParameterError('compressionLevel', 'integer between 0 and 9', level);
  const mode = options.orientation ?? 'restore';
  if (mode !== 'restore' && mode !== 'upright')
    throw invalidParameterError('orientation', 'one of restore, upright', mode);
  const orientation = (mode === 'restore' ? (img.meta?.orientation ?? 1) : 1) as Orientation;

  let width = img.width;
  let height = img.height;
  let samples = quantiseInterleave(img);
  if (orientation !== 1) {
    // Turn each channel back into the stored layout (the inverse of the display transform).
    const ch = img.channels;
    const n = width * height;
    const sw = swapsAxes(orientation) ? height : width;
    const sh = swapsAxes(orientation) ? width : height;
    const stored = img.bitDepth === 16 ? new Uint16Array(n * ch) : new Uint8Array(n * ch);
    const plane = img.bitDepth === 16 ? new Uint16Array(n) : new Uint8Array(n);
    for (let c = 0; c < ch; c++) {
      for (let i = 0; i < n; i++) plane[i] = samples[i * ch + c];
      const s = toStored(plane, width, height, orientation).plane;
      for (let i = 0; i < n; i++) stored[i * ch + c] = s[i];
    }
    samples = stored;
    width = sw;
    height = sh;
  }

  const space =
    img.channels <= 2 ? (img.bitDepth === 16 ? 'grey16' : 'b-w') : img.bitDepth === 16 ? 'rgb16' : 'srgb';
  let pipeline = sharp(samples, {
    raw: { width, height, channels: img.channels },
    limitInputPixels: false,
  }).toColourspace(space);
  if (img.meta?.density) pipeline = pipeline.withDensity(img.meta.density);
  pipeline =
    format === 'png'
      ? pipeline.png({ compressionLevel: level, adaptiveFiltering: true, palette: false })
      : pipeline.tiff({ compression: 'deflate', predictor: 'horizontal', quality: 100 });
  const bytes = await pipeline.toBuffer();
  const extra = { icc: img.meta?.icc, orientation, noResolution: !img.meta?.density };
  return format === 'png' ? addPngMetadata(bytes, extra) : addTiffMetadata(bytes, extra);
}

/**
 * Encode planes and write them atomically (temp file in the same folder, fsync, rename).
 * Refuses to replace an existing file unless `force` is set.
 * @throws OutputError naming the file if it exists without force, or cannot be written.
 * @throws UsageError for inconsistent input or an unknown extension.
 */
export async function encodeImage(
  file: string,
  img: EncodeInput,
  options: EncodeOptions = {},
): Promise<EncodeResult> {
  const format = options.format ?? formatFromPath(file);
  await assertWritable(file, options.force);
  let bytes: Buffer;
  try {
    bytes = await encodeImageBuffer(img, { ...options, format });
  } catch (err) {
    if (err instanceof UsageError) throw err;
    throw new OutputError(
      file,
      `cannot be encoded as ${format.toUpperCase()} (${(err as Error)?.message ?? err})`,
    );
  }
  await writeFileAtomic(file, bytes, { force: options.force });
  return { file, format, bytes: bytes.length };
}
