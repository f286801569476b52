/**
 * Decode a scan into integer sample planes (Uint8Array for 8-bit, Uint16Array for 16-bit), for scans too
 * large for Float32 planes: 1 or 2 bytes per sample instead of 4. The sharp pipeline, the colour-space
 * choice and the checks are those of `decodeImage` (./decode), and the SHA-256 is the same, so a scan
 * decodes to the same samples either way; only the array type differs.
 */
import { createHash } from 'node:crypto';
import sharp, { type OutputInfo } from 'sharp';
import type { WithWarnings } from '../../contract';
import { InputError } from '../../contract';
import type { SampleImage } from '../../engine/lowrank/tiled';
import { DEFAULT_PIXEL_LIMIT, type DecodeOptions, decodeImage, probeImage } from './decode';

/** Bytes hashed at a time when 16-bit samples are swapped to big-endian for the SHA-256. */
const HASH_CHUNK = 1 << 20;

/** Decode `file` into integer planes (see the module comment). Every failure is an InputError naming the file. */
export async function decodeSamples(
  file: string,
  options: DecodeOptions = {},
): Promise<SampleImage & WithWarnings> {
  const page = options.page ?? 0;
  const pixelLimit = options.pixelLimit ?? DEFAULT_PIXEL_LIMIT;
  const probe = await probeImage(file, { page, pixelLimit });
  const { meta, bitDepth } = probe;
  const hasAlpha = Boolean(meta.hasAlpha);
  const isCmyk = meta.space === 'cmyk';
  const isColour =
    isCmyk ||
    meta.space === 'srgb' ||
    meta.space === 'rgb16' ||
    (meta.channels ?? 1) - (hasAlpha ? 1 : 0) >= 3;
  const grayAlpha8 = !isColour && hasAlpha && bitDepth === 8;
  const space =
    isColour || grayAlpha8 ? (bitDepth === 16 ? 'rgb16' : 'srgb') : bitDepth === 16 ? 'grey16' : 'b-w';
  let data: Buffer;
  let info: OutputInfo;
  try {
    ({ data, info } = await sharp(file, { limitInputPixels: pixelLimit, failOn: 'error', page })
      .rotate()
      .keepIccProfile()
      .toColourspace(space)
      .raw({ depth: bitDepth === 16 ? 'ushort' : 'uchar' })
      .toBuffer({ resolveWithObject: true }));
  } catch {
    // Word the failure as decodeImage does (it names the file and the problem from the signature):
    // a file that fails here fails there too, normally at once.
    await decodeImage(file, { page, pixelLimit });
    throw new InputError(file, 'cannot be decoded: the file may be truncated or corrupt');
  }
  const { width, height } = info;
  const n = width * height;
  const bands = info.channels;
  const channels = (grayAlpha8 ? 2 : bands) as 1 | 2 | 3 | 4;
  if (grayAlpha8 && bands !== 4)
    throw new InputError(file, `gray+alpha decoded to ${bands} bands, expected 4`);
  if (data.length !== n * bands * (bitDepth / 8))
    throw new InputError(
      file,
      `decoded to ${data.length} bytes, expected ${n * bands * (bitDepth / 8)}; the file may be corrupt`,
    );
  const src =
    bitDepth === 16
      ? new Uint16Array(data.buffer, data.byteOffset, data.byteLength / 2)
      : new Uint8Array(data.buffer, data.byteOffset, data.byteLength);
  const picks = grayAlpha8 ? [0, 3] : Array.from({ length: bands }, (_, c) => c);
  let planes: (Uint8Array | Uint16Array)[];
  if (bands === 1) planes = [src];
  else
    planes = picks.map((b) => {
      const out = bitDepth === 16 ? new Uint16Array(n) : new Uint8Array(n);
      for (let i = 0, p = b; i < n; i++, p += bands) out[i] = src[p];
      return out;
    });
  const hash = createHash('sha256');
  if (bitDepth === 16) {
    // Interleaved, big-endian, in chunks (as decodeImage hashes it, without a second full-size buffer).
    const buf = Buffer.alloc(HASH_CHUNK * 2);
    const total = n * channels;
    for (let start = 0; start < total; start += HASH_CHUNK) {
      const end = Math.min(total, start + HASH_CHUNK);
      for (let s = start; s < end; s++)
        buf.writeUInt16BE(planes[s % channels][Math.floor(s / channels)], (s - start) * 2);
      hash.update(buf.subarray(0, (end - start) * 2));
    }
  } else if (!grayAlpha8) hash.update(src);
  else {
    const buf = Buffer.alloc(HASH_CHUNK * 2);
    for (let start = 0; start < n; start += HASH_CHUNK) {
      const end = Math.min(n, start + HASH_CHUNK);
      for (let i = start; i < end; i++) {
        buf[(i - start) * 2] = planes[0][i];
        buf[(i - start) * 2 + 1] = planes[1][i];
      }
      hash.update(buf.subarray(0, (end - start) * 2));
    }
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
    ...(probe.warnings.length > 0 ? { warnings: probe.warnings } : {}),
  };
}
