/**
 * `expand` as a service: read and validate an .rkf container, decode it, check the stored source
 * SHA-256 when the compression was lossless, and write PNG or TIFF (8 or 16 bits) atomically with
 * the ICC profile, DPI and orientation restored. Nothing is written when any check fails.
 *
 * Stored metadata that PNG/TIFF output cannot hold (a resolution outside 0–10^6 dpi, an orientation
 * outside 1–8, a damaged ICC profile; earlier versions could store such values) is left out with a
 * warning in the report, and the pixels are written: the container's samples are never lost over it.
 */
import { readFile, stat } from 'node:fs/promises';
import { performance } from 'node:perf_hooks';
import {
  type ExpandOptions,
  type ExpandReport,
  FormatError,
  InputError,
  type WithWarnings,
} from '../../contract';
import { MAX_PIXELS } from '../../engine/codec/image-file';
import {
  type DecodedRkf,
  type DecodedRkfSamples,
  decodeImageFile,
  decodeImageFileSamples,
} from '../../engine/lowrank/decode-image';
import { hashSamples } from '../image/decode';
import { encodeImage, formatFromPath } from '../image/encode';
import { keepableMetadata } from '../image/metadata-chunks';
import { describeFileError } from '../image/open-file';
import { assertWritable } from '../io/atomic';
import { COMPRESSORS } from './compress';

/** Files larger than this are refused before reading (4 GiB). */
const MAX_FILE = 2 ** 32;

/** A decoded container and the size of its file. */
type RkfRead<T> = Promise<{ decoded: T; inputBytes: number }>;

/** Read and decode a container into samples (validating everything). */
export function readRkf(input: string, opts: { pixelLimit?: number } = {}): RkfRead<DecodedRkf> {
  return readRkfWith(input, opts, decodeImageFile);
}

/** As {@link readRkf}, with integer samples (1–2 bytes each instead of 4): what `expand` writes from. */
export function readRkfSamples(
  input: string,
  opts: { pixelLimit?: number } = {},
): RkfRead<DecodedRkfSamples> {
  return readRkfWith(input, opts, decodeImageFileSamples);
}

/** Read a container and decode it with `decode` under the pixel limit (default MAX_PIXELS). */
async function readRkfWith<T>(
  input: string,
  opts: { pixelLimit?: number },
  decode: (bytes: Uint8Array, name: string, o: Parameters<typeof decodeImageFile>[2]) => T,
): RkfRead<T> {
  const { bytes, size } = await readRkfBytes(input);
  const decoded = decode(bytes, input, {
    compressors: COMPRESSORS,
    maxPixels: opts.pixelLimit ?? MAX_PIXELS,
  });
  return { decoded, inputBytes: size };
}

/** The bytes of a container file, with its size checked first. */
async function readRkfBytes(input: string): Promise<{ bytes: Uint8Array; size: number }> {
  let size: number;
  try {
    const st = await stat(input);
    if (st.isDirectory()) throw new InputError(input, 'is a folder, not an .rkf file');
    size = st.size;
  } catch (err) {
    if (err instanceof InputError) throw err;
    throw describeFileError(input, err);
  }
  if (size > MAX_FILE)
    throw new FormatError(input, `is ${size} bytes, larger than any valid .rkf file this Rankfold reads`);
  let bytes: Uint8Array;
  try {
    bytes = new Uint8Array(await readFile(input));
  } catch (err) {
    throw describeFileError(input, err);
  }
  return { bytes, size };
}

/**
 * Expand `input` (.rkf) to `output` (.png, .tif or .tiff).
 * @example await expandFile('scan.rkf', 'scan.png', { force: false });
 * @throws FormatError (damaged or unsupported container), OutputError, UsageError (extension).
 */
export async function expandFile(
  input: string,
  output: string,
  opts: ExpandOptions = {},
): Promise<ExpandReport & WithWarnings> {
  const format = formatFromPath(output);
  await assertWritable(output, opts.force);
  const t1 = performance.now();
  const { decoded, inputBytes } = await readRkfSamples(input, { pixelLimit: opts.pixelLimit });
  const t2 = performance.now();
  const h = decoded.header;
  let hashChecked = false;
  if (h.alphaSha256 !== undefined && decoded.channels % 2 === 0) {
    const got = hashSamples([decoded.samples[decoded.channels - 1]], decoded.bitDepth);
    if (got !== h.alphaSha256)
      throw new FormatError(
        input,
        'its lossless alpha plane does not match the stored alpha SHA-256; nothing was written',
      );
  }
  if (h.lossless) {
    const got = hashSamples(decoded.samples, decoded.bitDepth);
    if (got !== h.sourceSha256)
      throw new FormatError(
        input,
        `is marked lossless but its decoded samples do not match the stored source SHA-256 (${h.sourceSha256.slice(0, 12)}…); nothing was written`,
      );
    hashChecked = true;
  }
  const kept = keepableMetadata(
    input,
    { icc: decoded.icc, density: h.metadata.density, orientation: h.metadata.orientation },
    'container',
  );
  const meta = kept.meta;
  const written = await encodeImage(
    output,
    {
      width: decoded.width,
      height: decoded.height,
      channels: decoded.channels,
      bitDepth: decoded.bitDepth,
      planes: decoded.samples,
      meta,
    },
    { format, force: opts.force, orientation: opts.orientation },
  );
  const t3 = performance.now();
  return {
    input,
    output,
    format,
    width: decoded.width,
    height: decoded.height,
    channels: decoded.channels,
    bitDepth: decoded.bitDepth,
    inputBytes,
    outputBytes: written.bytes,
    hashChecked,
    alphaChecked: h.alphaSha256 !== undefined,
    sourceSha256: h.sourceSha256,
    lossless: h.lossless,
    metadata: { icc: Boolean(meta.icc), density: meta.density, orientation: meta.orientation },
    timings: { decodeMs: Math.round((t2 - t1) * 10) / 10, writeMs: Math.round((t3 - t2) * 10) / 10 },
    ...(kept.warnings.length > 0 ? { warnings: kept.warnings } : {}),
  };
}
