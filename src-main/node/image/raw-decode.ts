/**
 * Decode a scan into integer sample planes (Uint8Array for 8-bit, Uint16Array for 16-bit), for scans too
 * large for Float32 planes: 1 or 2 bytes per sample instead of 4. The sharp pipeline, the colour-space
 * choice, the checks, the error wording and the metadata kept are `decodeInterleaved`'s (./decode), shared
 * with `decodeImage`, and the SHA-256 is the same, so a scan decodes to the same samples either way; only
 * the array type differs.
 */
import type { WithWarnings } from '../../contract';
import type { SampleImage } from '../../engine/lowrank/tiled';
import { type DecodeOptions, decodeInterleaved, hashInterleaved, sampleWords, scanFields } from './decode';

/** Decode `file` into integer planes (see the module comment). Every failure is an InputError naming the file. */
export async function decodeSamples(
  file: string,
  options: DecodeOptions = {},
): Promise<SampleImage & WithWarnings> {
  const scan = await decodeInterleaved(file, options);
  const { data, channels, bitDepth } = scan;
  const n = scan.width * scan.height;
  const src = sampleWords(data, bitDepth);
  let planes: (Uint8Array | Uint16Array)[];
  if (channels === 1) planes = [src];
  else
    planes = Array.from({ length: channels }, (_, b) => {
      const out = bitDepth === 16 ? new Uint16Array(n) : new Uint8Array(n);
      for (let i = 0, p = b; i < n; i++, p += channels) out[i] = src[p];
      return out;
    });
  // Interleaved, big-endian for 16-bit, in chunks (as decodeImage hashes it, without a second full-size buffer).
  return { ...scanFields(scan, file), planes, sourceSha256: hashInterleaved(src) };
}
