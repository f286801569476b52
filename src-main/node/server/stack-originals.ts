/**
 * The original frames of a stack, for the page's left pane: the user names where the frames the stack
 * was made from are (the folder, or the multi-page TIFF), and each frame is found there by the name its
 * frame table records (`compress --stack` keeps the file name, or `file.tif#page`). A frame is shown only
 * when it is the one that was stored: same size, depth and channels, and — when the file records it —
 * the same SHA-256 of its decoded samples (the SHSH chunk, docs/format.md "Stack layout").
 * Anything else gives a note saying why the original is not shown, never an error: the decoded frame
 * stays on screen.
 */
import { stat } from 'node:fs/promises';
import { basename, join } from 'node:path';
import type { StackHeader } from '../../engine/codec/stack-header';
import { decodeImage } from '../image/decode';

export interface OriginalFrame {
  /** The original's planes on the sample scale, when it was found and matches. */
  planes?: Float32Array[];
  /** What the left pane says: which file it shows, or why it shows none. */
  note: string;
}

/** Where a frame named `name` lives under `source` (a folder or a multi-page TIFF), if anywhere. */
function locate(
  source: string,
  isFolder: boolean,
  name: string,
): { file: string; page?: number } | undefined {
  if (isFolder)
    return name === basename(name) && !name.includes('\\') ? { file: join(source, name) } : undefined;
  const m = /^(.*)#(\d+)$/.exec(name);
  return m && m[1] === basename(source) ? { file: source, page: Number(m[2]) } : undefined;
}

/** Size, depth and colour of a frame, in words. */
const shape = (w: number, h: number, bits: number, channels: number) =>
  `${w}×${h} px, ${bits}-bit, ${channels === 1 ? 'grey' : `${channels} channels`}`;

/**
 * Frame `frame` of the stack with header `h`, read from `given` (the path as the user typed it).
 * @param readable the back end's access check: the real path of a file the user may read, or a refusal.
 */
export async function originalFrame(
  given: string,
  h: StackHeader,
  frame: number,
  readable: (path: string) => Promise<string>,
): Promise<OriginalFrame> {
  const name = h.frameTable[frame]?.name;
  const label = `frame ${frame + 1}`;
  if (!name) return { note: `The stack file does not record the file name of ${label}` };
  let source: string;
  let isFolder: boolean;
  try {
    source = await readable(given);
    isFolder = (await stat(source)).isDirectory();
  } catch (err) {
    return { note: err instanceof Error ? err.message : String(err) };
  }
  const where = locate(source, isFolder, name);
  if (!where) return { note: `${given} does not hold ${name} (${label})` };
  let img: Awaited<ReturnType<typeof decodeImage>>;
  try {
    img = await decodeImage(await readable(where.file), { page: where.page });
  } catch {
    return { note: `${name} (${label}) is missing from ${given} or cannot be read` };
  }
  const want = shape(h.width, h.height, h.bitDepth, h.channels);
  const got = shape(img.width, img.height, img.bitDepth, img.channels);
  if (got !== want) return { note: `${name} in ${given} is ${got}; the stack's frames are ${want}` };
  const recorded = h.frameTable[frame].sourceSha256;
  if (recorded && /^[0-9a-f]{64}$/i.test(recorded) && !/^0+$/.test(recorded) && recorded !== img.sourceSha256)
    return { note: `${name} in ${given} is not the frame that was stored: its samples have changed since` };
  return { planes: img.planes, note: `original: ${name}` };
}
