/**
 * Decode a scan into integer sample planes (Uint8Array for 8-bit, Uint16Array for 16-bit), for scans too
 * large for Float32 planes: 1 or 2 bytes per sample instead of 4. The sharp pipeline, the colour-space
 * choice, the checks, the error wording and the metadata kept are `decodeInterleaved`'s (./decode), shared
 * with `decodeImage`, and the SHA-256 is the same, so a scan decodes to the same samples either way; only
 * the array type differs.
 */
import { createHash } from 'node:crypto';
import type { WithWarnings } from '../../contract';
import type { SampleImage } from '../../engine/lowrank/tiled';
import { type DecodeOptions, decodeInterleaved, scanFields } from './decode';

/** Bytes hashed at a time when 16-bit samples are swapped to big-endian for the SHA-256. */
const HASH_CHUNK = 1 << 20;

/** Decode `file` into integer planes (see the module comment). Every failure is an InputError naming the file. */
export async function decodeSamples(
  file: string,
  options: DecodeOptions = {},
): Promise<SampleImage & WithWarnings> {
  const scan = await decodeInterleaved(file, options);
  const { data, channels, bitDepth } = scan;
  const n = scan.width * scan.height;
  const src =
    bitDepth === 16
      ? new Uint16Array(data.buffer, data.byteOffset, data.byteLength / 2)
      : new Uint8Array(data.buffer, data.byteOffset, data.byteLength);
  let planes: (Uint8Array | Uint16Array)[];
  if (channels === 1) planes = [src];
  else
    planes = Array.from({ length: channels }, (_, b) => {
      const out = bitDepth === 16 ? new Uint16Array(n) : new Uint8Array(n);
      for (let i = 0, p = b; i < n; i++, p += channels) out[i] = src[p];
      return out;
    });
  const hash = createHash('sha256');
  if (bitDepth === 16) {
    // Interleaved, big-endian, in chunks (as decodeImage hashes it, without a second full-size buffer).
    const buf = Buffer.alloc(HASH_CHUNK * 2);
    const total = n * channels;
    const words = src as Uint16Array;
    for (let start = 0; start < total; start += HASH_CHUNK) {
      const end = Math.min(total, start + HASH_CHUNK);
      for (let s = start; s < end; s++) buf.writeUInt16BE(words[s], (s - start) * 2);
      hash.update(buf.subarray(0, (end - start) * 2));
    }
  } else hash.update(src);
  return { ...scanFields(scan, file), planes, sourceSha256: hash.digest('hex') };
}
