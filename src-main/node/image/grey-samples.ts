/**
 * A grey scan decoded for the whole-scan encoder as its integer samples, not as a float plane: sharp's 8-bit
 * (or 16-bit) output copied once into shared memory (the encoder's second thread reads it without a copy),
 * whose pages are touched on a pool thread while sharp decodes (./prefault.ts), as decodeImage's planes are.
 * The values are the float plane's (every 8-bit and 16-bit sample is exact in f32), and the encoder widens
 * them to float itself wherever it needs float planes (engine/lowrank/scan-image.ts), so the file and every
 * figure are the same bit for bit. Why: an 8-megapixel scan's float plane is 33 MB of fresh pages (about
 * 8 000 page faults at ~11 µs each on the 2-core machine of issue #12); its integer copy is 8 MB.
 */
import type { WithWarnings } from '../../contract';
import type { ScanImage } from '../../engine/lowrank/scan-image';
import {
  type DecodeOptions,
  decodeImage,
  decodeInterleaved,
  hashInterleaved,
  type ProbeResult,
  sampleWords,
  scanFields,
} from './decode';
import { prefault } from './prefault';
import { isColourScan } from './refusals';

/** A zeroed array of `n` samples of `bitDepth` bits, on a SharedArrayBuffer when the runtime has one. */
function sharedSamples(n: number, bitDepth: 8 | 16): Uint8Array | Uint16Array {
  const bytes = bitDepth === 16 ? 2 : 1;
  const buffer =
    typeof SharedArrayBuffer === 'function' ? new SharedArrayBuffer(n * bytes) : new ArrayBuffer(n * bytes);
  return bytes === 2 ? new Uint16Array(buffer) : new Uint8Array(buffer);
}

/** Whether {@link decodeGreySamples} gives integer samples for the scan `probe` describes: grey, no alpha. */
export function greyWithoutAlpha(probe: ProbeResult): boolean {
  return !isColourScan(probe.meta) && !probe.meta.hasAlpha;
}

/**
 * Decode `file` for the encoder: a grey scan without alpha as one plane of integer samples in shared memory
 * (touched on a pool thread meanwhile when `prefault`), anything else as decodeImage's float planes.
 * `options.probe` is required (it tells grey from colour before the decode). Failures as decodeImage's.
 */
export async function decodeGreySamples(
  file: string,
  options: DecodeOptions & { probe: ProbeResult },
): Promise<ScanImage & WithWarnings> {
  if (!greyWithoutAlpha(options.probe)) return decodeImage(file, options);
  const held: { samples?: Uint8Array | Uint16Array } = {};
  const bitDepth = options.probe.bitDepth;
  const touch = options.prefault
    ? ({ pixels }: { pixels: number }) => {
        try {
          held.samples = sharedSamples(pixels, bitDepth);
        } catch {
          held.samples = undefined;
        }
        return prefault(held.samples ? [held.samples] : []);
      }
    : undefined;
  const scan = await decodeInterleaved(file, options, touch);
  // Never expected (sharp's grey output is one band): the float planes, as for any other scan.
  if (scan.channels !== 1 || scan.bitDepth !== bitDepth) return decodeImage(file, options);
  const words = sampleWords(scan.data, bitDepth);
  const early = held.samples;
  const samples = early?.length === words.length ? early : sharedSamples(words.length, bitDepth);
  samples.set(words);
  return { ...scanFields(scan, file), planes: [samples], sourceSha256: hashInterleaved(words) };
}
