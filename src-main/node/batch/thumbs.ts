/**
 * Thumbnails for the report: the original and the reconstruction (the .rkf decoded again, in memory) side by side,
 * as PNG data URIs so the HTML page needs no other file and no network.
 */
import sharp, { type Sharp } from 'sharp';
import type { BatchRow } from '../../contract';
import { RankfoldError } from '../../contract';
import { decodeSamples } from '../image/raw-decode';

/** Longest edge of a thumbnail in pixels: enough to see banding and blur, small enough for a page of six pairs. */
const THUMB_EDGE = 320;

export interface ThumbPair {
  original?: string;
  reconstruction?: string;
  /** Why one of the two is missing, or how the display was scaled. */
  note?: string;
}

async function dataUrl(img: Sharp): Promise<string> {
  const buf = await img
    .resize(THUMB_EDGE, THUMB_EDGE, { fit: 'inside', withoutEnlargement: true, kernel: 'lanczos3' })
    .toColourspace('srgb')
    .png({ compressionLevel: 9 })
    .toBuffer();
  return `data:image/png;base64,${buf.toString('base64')}`;
}

/** Decoded samples: one plane per channel (alpha last when present), 8- or 16-bit values. */
export interface ThumbSource {
  width: number;
  height: number;
  channels: number;
  bitDepth: number;
  samples: ArrayLike<number>[];
}

/**
 * How a pair's samples map to 8-bit display. 8-bit samples are shown as stored; 16-bit ones by ÷257, unless
 * the original's brightest colour sample is under half the range (common for film, plate and gel scans
 * that use a few bits of a 16-bit file), when both thumbnails are stretched by the same factor so that
 * sample shows white: the pair is then comparable instead of black. Never applied to the files.
 */
export function displayScale(original: ThumbSource): { scale: number; note?: string } {
  if (original.bitDepth !== 16) return { scale: 1 };
  const colour =
    original.channels === 2 || original.channels === 4 ? original.channels - 1 : original.channels;
  let max = 0;
  for (let c = 0; c < colour; c++) {
    const plane = original.samples[c];
    for (let i = 0; i < plane.length; i++) if (plane[i] > max) max = plane[i];
  }
  if (max === 0 || max >= 32768) return { scale: 1 / 257 };
  return {
    scale: 255 / max,
    note: `16-bit samples 0–${max} shown as 0–255 in both thumbnails (display only)`,
  };
}

/** Thumbnail of decoded samples at a display scale (see displayScale). */
async function samplesThumb(img: ThumbSource, scale: number): Promise<string> {
  const { width, height, channels, samples } = img;
  const raw = Buffer.alloc(width * height * channels);
  for (let c = 0; c < channels; c++) {
    const plane = samples[c];
    // Alpha keeps its own scale: it is coverage, not brightness.
    const k =
      c === channels - 1 && (channels === 2 || channels === 4) ? (img.bitDepth === 16 ? 1 / 257 : 1) : scale;
    for (let i = 0, p = c; i < width * height; i++, p += channels)
      raw[p] = Math.max(0, Math.min(255, Math.round(plane[i] * k)));
  }
  return dataUrl(sharp(raw, { raw: { width, height, channels: channels as 1 | 2 | 3 | 4 } }));
}

/** The pair from an original and its reconstruction in memory, both at the original's display scale. */
export async function pairFromSamples(
  original: ThumbSource,
  reconstruction: ThumbSource,
): Promise<ThumbPair> {
  const { scale, note } = displayScale(original);
  return {
    original: await samplesThumb(original, scale),
    reconstruction: await samplesThumb(reconstruction, scale),
    note,
  };
}

/** Reads a container into integer samples (1–2 bytes each), as services/expand `readRkfSamples` does. */
export type ReadRkfSamples = (
  input: string,
  opts?: { pixelLimit?: number },
) => Promise<{ decoded: ThumbSource }>;

/** Load `readRkfSamples` from src-main/node/services/expand (lazily, as ./codec loads the codec). */
async function loadSampleReader(): Promise<ReadRkfSamples> {
  let mod: { readRkfSamples?: ReadRkfSamples };
  try {
    mod = await import('../services/expand');
  } catch (err) {
    throw new RankfoldError(
      `this build has no container reader (src-main/node/services/expand): ${(err as Error).message}`,
    );
  }
  if (typeof mod.readRkfSamples !== 'function')
    throw new RankfoldError('this build has no readRkfSamples in services/expand');
  return mod.readRkfSamples;
}

/**
 * The thumbnail pair of one finished file, from disk (best effort: a missing file gives a note, never an
 * error). Both sides are read as integer samples (1–2 bytes per sample, the container rebuilt band by band),
 * not as Float32 planes, so a large scan's pair needs a quarter of the memory; one side at a time.
 */
export async function thumbnailPair(
  r: Pick<BatchRow, 'inputAbs' | 'outputAbs'>,
  reader?: () => Promise<ReadRkfSamples>,
): Promise<ThumbPair> {
  const notes: string[] = [];
  const pair: ThumbPair = {};
  const failed = (err: unknown) =>
    notes.push(`thumbnails unavailable (${(err as Error).message.split('\n')[0]})`);
  // The original first, drawn and let go before the reconstruction is read.
  let display: { scale: number; note?: string } | undefined;
  try {
    const d = await decodeSamples(r.inputAbs, { pixelLimit: Number.MAX_SAFE_INTEGER });
    display = displayScale({ ...d, samples: d.planes });
    try {
      pair.original = await samplesThumb({ ...d, samples: d.planes }, display.scale);
    } catch (err) {
      failed(err);
    }
  } catch (err) {
    notes.push(`original unavailable (${(err as Error).message.split('\n')[0]})`);
  }
  let reconstruction: ThumbSource | undefined;
  try {
    const readRkf = await (reader ?? loadSampleReader)();
    try {
      reconstruction = (await readRkf(r.outputAbs, { pixelLimit: Number.MAX_SAFE_INTEGER })).decoded;
    } catch (err) {
      notes.push(`reconstruction unavailable (${(err as Error).message.split('\n')[0]})`);
    }
  } catch (err) {
    notes.push(`reconstruction unavailable (${(err as Error).message})`);
  }
  const { scale, note } = display ?? { scale: reconstruction?.bitDepth === 16 ? 1 / 257 : 1 };
  try {
    if (reconstruction) pair.reconstruction = await samplesThumb(reconstruction, scale);
  } catch (err) {
    failed(err);
  }
  if (note) notes.push(note);
  if (notes.length) pair.note = notes.join('; ');
  return pair;
}

/**
 * Thumbnail pairs for the given rows, keyed by path. Without `draw`, drawn here one row after another (one
 * decoded scan in memory at a time); with it, all are asked for at once (the batch runner passes its
 * worker pool, which bounds how many run together).
 */
export async function makeThumbnails(
  rows: BatchRow[],
  draw?: (r: BatchRow) => Promise<ThumbPair>,
): Promise<Map<string, ThumbPair>> {
  const out = new Map<string, ThumbPair>();
  if (draw) {
    const pairs = await Promise.all(rows.map(draw));
    for (let i = 0; i < rows.length; i++) out.set(rows[i].path, pairs[i]);
  } else for (const r of rows) out.set(r.path, await thumbnailPair(r));
  return out;
}
