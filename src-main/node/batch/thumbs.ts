/**
 * Thumbnails for the report: the original and the reconstruction (the .rkf decoded again, in memory) side by side,
 * as PNG data URIs so the HTML page needs no other file and no network.
 */
import sharp, { type Sharp } from 'sharp';
import type { BatchRow } from '../../contract';
import { loadReader, type ReadRkf } from './codec';

/** Longest edge of a thumbnail in pixels: enough to see banding and blur, small enough for a page of six pairs. */
export const THUMB_EDGE = 320;

export interface ThumbPair {
  original?: string;
  reconstruction?: string;
  /** Why one of the two is missing. */
  note?: string;
}

async function thumb(file: string): Promise<string> {
  return dataUrl(sharp(file, { limitInputPixels: false }).rotate());
}

async function dataUrl(img: Sharp): Promise<string> {
  const buf = await img
    .resize(THUMB_EDGE, THUMB_EDGE, { fit: 'inside', withoutEnlargement: true, kernel: 'lanczos3' })
    .toColourspace('srgb')
    .png({ compressionLevel: 9 })
    .toBuffer();
  return `data:image/png;base64,${buf.toString('base64')}`;
}

/** Thumbnail of decoded samples (one plane per channel, 8- or 16-bit values), drawn from memory. */
export async function samplesThumb(img: {
  width: number;
  height: number;
  channels: number;
  bitDepth: number;
  samples: ArrayLike<number>[];
}): Promise<string> {
  const { width, height, channels, samples } = img;
  const scale = img.bitDepth === 16 ? 1 / 257 : 1;
  const raw = Buffer.alloc(width * height * channels);
  for (let c = 0; c < channels; c++) {
    const plane = samples[c];
    for (let i = 0, p = c; i < width * height; i++, p += channels)
      raw[p] = Math.max(0, Math.min(255, Math.round(plane[i] * scale)));
  }
  return dataUrl(sharp(raw, { raw: { width, height, channels: channels as 1 | 2 | 3 | 4 } }));
}

/** Thumbnail of a .rkf decoded in memory (no temporary file anywhere). */
async function rkfThumb(readRkf: ReadRkf, file: string): Promise<string> {
  const { decoded } = await readRkf(file, { pixelLimit: Number.MAX_SAFE_INTEGER });
  return samplesThumb(decoded);
}

/** The thumbnail pair of one finished file (best effort: a missing file gives a note, never an error). */
export async function thumbnailPair(
  r: Pick<BatchRow, 'inputAbs' | 'outputAbs'>,
  reader?: () => Promise<ReadRkf>,
): Promise<ThumbPair> {
  const pair: ThumbPair = {};
  const notes: string[] = [];
  try {
    pair.original = await thumb(r.inputAbs);
  } catch (err) {
    notes.push(`original unavailable (${(err as Error).message.split('\n')[0]})`);
  }
  try {
    const readRkf = await (reader ?? loadReader)();
    try {
      pair.reconstruction = await rkfThumb(readRkf, r.outputAbs);
    } catch (err) {
      notes.push(`reconstruction unavailable (${(err as Error).message.split('\n')[0]})`);
    }
  } catch (err) {
    notes.push(`reconstruction unavailable (${(err as Error).message})`);
  }
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
