/**
 * A scan without alpha decoded for the whole-scan encoder as its integer samples, not as float planes: sharp's
 * 8-bit (or 16-bit) output copied once into one shared plane per channel (the encoder's second thread reads
 * them without a copy), whose pages are touched on a pool thread while sharp decodes (./prefault.ts), as
 * decodeImage's planes are. The values are the float planes' (every 8-bit and 16-bit sample is exact in f32),
 * and the encoder widens them to float itself wherever it needs float planes (engine/lowrank/scan-image.ts), so
 * the file and every figure are the same bit for bit. Why: an 8-megapixel scan's float plane is 33 MB of fresh
 * pages per channel (about 8 000 page faults at ~11 µs each on the 2-core machine of issue #12); its 8-bit
 * samples are 8 MB.
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

type Samples = Uint8Array | Uint16Array;

/** A zeroed array of `n` samples of `bitDepth` bits, on a SharedArrayBuffer when the runtime has one. */
function sharedSamples(n: number, bitDepth: 8 | 16): Samples {
  const bytes = bitDepth === 16 ? 2 : 1;
  const buffer =
    typeof SharedArrayBuffer === 'function' ? new SharedArrayBuffer(n * bytes) : new ArrayBuffer(n * bytes);
  return bytes === 2 ? new Uint16Array(buffer) : new Uint8Array(buffer);
}

/** Channels of the scan `probe` describes when {@link decodeIntegerSamples} gives it integer samples, else 0. */
function integerChannels(probe: ProbeResult): number {
  if (probe.meta.hasAlpha) return 0;
  return isColourScan(probe.meta) ? 3 : 1;
}

/** Interleaved samples (`planes.length` per pixel) into one plane per channel. */
function deinterleave(words: Samples, planes: Samples[]): void {
  const channels = planes.length;
  if (channels === 1) {
    planes[0].set(words);
    return;
  }
  const n = planes[0].length;
  for (let c = 0; c < channels; c++) {
    const p = planes[c];
    for (let i = 0, q = c; i < n; i++, q += channels) p[i] = words[q];
  }
}

/**
 * Decode `file` for the encoder: a grey or colour scan without alpha as integer samples in shared memory
 * (touched on a pool thread meanwhile when `prefault`), anything else as decodeImage's float planes.
 * `options.probe` is required (it tells the channels before the decode). Failures as decodeImage's.
 */
export async function decodeIntegerSamples(
  file: string,
  options: DecodeOptions & { probe: ProbeResult },
): Promise<ScanImage & WithWarnings> {
  const channels = integerChannels(options.probe);
  if (channels === 0) return decodeImage(file, options);
  const held: { planes?: Samples[] } = {};
  const bitDepth = options.probe.bitDepth;
  const touch = options.prefault
    ? ({ pixels }: { pixels: number }) => {
        try {
          held.planes = Array.from({ length: channels }, () => sharedSamples(pixels, bitDepth));
        } catch {
          held.planes = undefined;
        }
        return prefault(held.planes ?? []);
      }
    : undefined;
  const scan = await decodeInterleaved(file, options, touch);
  // Never expected (sharp gives the bands the probe promised): the float planes, as for any other scan.
  if (scan.channels !== channels || scan.bitDepth !== bitDepth) return decodeImage(file, options);
  const n = scan.width * scan.height;
  const words = sampleWords(scan.data, bitDepth);
  const early = held.planes;
  const planes =
    early?.[0].length === n ? early : Array.from({ length: channels }, () => sharedSamples(n, bitDepth));
  deinterleave(words, planes);
  return { ...scanFields(scan, file), planes, sourceSha256: hashInterleaved(words) };
}
