/**
 * Thumbnails for the report: the original and the reconstruction (the .rkf expanded again) side by side,
 * as PNG data URIs so the HTML page needs no other file and no network.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import type { BatchRow } from '../../contract';
import { loadExpander } from './codec';

/** Longest edge of a thumbnail in pixels: enough to see banding and blur, small enough for a page of six pairs. */
export const THUMB_EDGE = 320;

export interface ThumbPair {
  original?: string;
  reconstruction?: string;
  /** Why one of the two is missing. */
  note?: string;
}

async function thumb(file: string): Promise<string> {
  const buf = await sharp(file, { limitInputPixels: false })
    .rotate()
    .resize(THUMB_EDGE, THUMB_EDGE, { fit: 'inside', withoutEnlargement: true, kernel: 'lanczos3' })
    .toColourspace('srgb')
    .png({ compressionLevel: 9 })
    .toBuffer();
  return `data:image/png;base64,${buf.toString('base64')}`;
}

/** Thumbnail pairs for the given rows (best effort: a missing file gives a note, never an error). */
export async function makeThumbnails(rows: BatchRow[]): Promise<Map<string, ThumbPair>> {
  const out = new Map<string, ThumbPair>();
  if (!rows.length) return out;
  const dir = await mkdtemp(join(tmpdir(), 'rankfold-thumbs-'));
  try {
    let expandFile: Awaited<ReturnType<typeof loadExpander>> | undefined;
    let expandProblem = '';
    try {
      expandFile = await loadExpander();
    } catch (err) {
      expandProblem = (err as Error).message;
    }
    let i = 0;
    for (const r of rows) {
      const pair: ThumbPair = {};
      const notes: string[] = [];
      try {
        pair.original = await thumb(r.inputAbs);
      } catch (err) {
        notes.push(`original unavailable (${(err as Error).message.split('\n')[0]})`);
      }
      if (expandFile) {
        try {
          const png = join(dir, `r${i++}.png`);
          await expandFile(r.outputAbs, png, { force: true });
          pair.reconstruction = await thumb(png);
        } catch (err) {
          notes.push(`reconstruction unavailable (${(err as Error).message.split('\n')[0]})`);
        }
      } else notes.push(`reconstruction unavailable (${expandProblem})`);
      if (notes.length) pair.note = notes.join('; ');
      out.set(r.path, pair);
    }
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
  return out;
}
