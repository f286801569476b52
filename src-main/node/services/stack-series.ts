/**
 * A stack's series: the frames of a folder (natural name order, optionally filtered by a glob) or of a
 * multi-page TIFF, decoded and checked against the first frame (size, bit depth, colour model).
 */
import { readdir, stat } from 'node:fs/promises';
import { basename, extname, join } from 'node:path';
import picomatch from 'picomatch';
import { type DecodedImage, InputError, UsageError } from '../../contract';
import type { StackInput } from '../../engine/codec/stack-header';
import { decodeImage, probeImage } from '../image/decode';

/** Frames decoded ahead of the one being checked. */
const DECODE_AHEAD = 4;
const IMAGE_EXT = new Set(['.png', '.tif', '.tiff', '.jpg', '.jpeg', '.webp']);
/** Natural sort: "frame-2" before "frame-10" (Unicode collation with numeric ordering, ECMA-402). */
const collator = new Intl.Collator('en', { numeric: true, sensitivity: 'base' });
export const naturalCompare = (a: string, b: string) =>
  collator.compare(a, b) || (a < b ? -1 : a > b ? 1 : 0);

/** Where each frame comes from. */
interface FrameSource {
  file: string;
  page?: number;
  /** Label kept in the frame table. */
  name: string;
}

/**
 * List the frames of a series: a folder's image files (natural order, optionally filtered by a glob on
 * the file name), or every page of a multi-page TIFF.
 * @throws InputError naming the folder or file when there is nothing to stack.
 */
async function listStackFrames(source: string, glob?: string): Promise<FrameSource[]> {
  let st: Awaited<ReturnType<typeof stat>>;
  try {
    st = await stat(source);
  } catch {
    throw new InputError(source, 'no such file or folder');
  }
  if (st.isDirectory()) {
    const match = glob ? picomatch(glob, { dot: false }) : () => true;
    const names = (await readdir(source, { withFileTypes: true }))
      .filter((d) => d.isFile() && !d.name.startsWith('.') && IMAGE_EXT.has(extname(d.name).toLowerCase()))
      .map((d) => d.name)
      .filter((n) => match(n))
      .sort(naturalCompare);
    if (names.length < 2)
      throw new InputError(
        source,
        `holds ${names.length} image file${names.length === 1 ? '' : 's'}${glob ? ` matching --frames ${JSON.stringify(glob)}` : ''}; a stack needs at least 2 frames (PNG, TIFF, JPEG or WebP)`,
      );
    return names.map((n) => ({ file: join(source, n), name: n }));
  }
  if (glob)
    throw new UsageError(
      'compress --stack: --frames selects files in a folder; a multi-page TIFF always uses all its pages',
    );
  const probe = await probeImage(source);
  if (probe.pages < 2)
    throw new InputError(
      source,
      `has ${probe.pages} page; stack mode needs a folder of frames or a multi-page TIFF with at least 2 pages`,
    );
  return Array.from({ length: probe.pages }, (_, page) => ({
    file: source,
    page,
    name: `${basename(source)}#${page}`,
  }));
}

/** A frame of an in-memory series (what the app hands over): planes on the source scale. */
export interface StackFrame {
  width: number;
  height: number;
  bitDepth: 8 | 16;
  /** 1 = gray, 3 = RGB. */
  channels: number;
  planes: ArrayLike<number>[];
  name?: string;
  sourceSha256?: string;
  /** For messages. */
  file?: string;
}

/**
 * Check that every frame matches the first in size, bit depth and channels.
 * @throws InputError naming the first frame that differs, and how.
 */
export function checkSeries(frames: StackFrame[]): StackInput {
  if (frames.length < 2) throw new UsageError(`a stack needs at least 2 frames, got ${frames.length}`);
  const first = frames[0];
  const label = (f: StackFrame, j: number) => f.file ?? f.name ?? `frame ${j}`;
  for (let j = 0; j < frames.length; j++) {
    const f = frames[j];
    if (f.channels === 2 || f.channels === 4)
      throw new InputError(
        label(f, j),
        'has an alpha channel; stack mode codes gray or colour frames only — flatten the alpha first or compress this scan on its own',
      );
    if (f.channels !== 1 && f.channels !== 3)
      throw new InputError(label(f, j), `has ${f.channels} channels; stack mode codes 1 (gray) or 3 (RGB)`);
    if (f.width !== first.width || f.height !== first.height)
      throw new InputError(
        label(f, j),
        `is ${f.width}×${f.height} but the first frame (${label(first, 0)}) is ${first.width}×${first.height}; every frame of a stack must have the same size`,
      );
    if (f.bitDepth !== first.bitDepth)
      throw new InputError(
        label(f, j),
        `is ${f.bitDepth}-bit but the first frame (${label(first, 0)}) is ${first.bitDepth}-bit; every frame of a stack must have the same bit depth`,
      );
    if (f.channels !== first.channels)
      throw new InputError(
        label(f, j),
        `is ${f.channels === 1 ? 'gray' : 'colour'} but the first frame (${label(first, 0)}) is ${first.channels === 1 ? 'gray' : 'colour'}; every frame of a stack must have the same colour model`,
      );
  }
  return {
    width: first.width,
    height: first.height,
    bitDepth: first.bitDepth,
    channels: first.channels as 1 | 3,
    frames: frames.map((f, j) => ({
      planes: f.planes,
      name: f.name ?? `frame ${j}`,
      sourceSha256: f.sourceSha256,
    })),
  };
}

/**
 * Decode every frame of a series, checking each against the first as soon as it is read.
 * @throws InputError naming the frame file that does not match.
 */
export async function loadStack(
  source: string,
  options: { frames?: string; pixelLimit?: number } = {},
): Promise<{ frames: StackFrame[]; inputBytes: number; sources: FrameSource[] }> {
  const sources = await listStackFrames(source, options.frames);
  const frames: StackFrame[] = [];
  let inputBytes = 0;
  const seenFiles = new Set<string>();
  // Up to DECODE_AHEAD frames decode at once (libvips runs them on its own threads while this thread
  // converts the previous ones); results are taken, checked and reported strictly in frame order, so
  // the first frame that fails or differs is the one named, as with one decode at a time.
  const pending: Array<Promise<DecodedImage>> = [];
  const start = (k: number) => {
    if (k >= sources.length) return;
    const s = sources[k];
    const p = decodeImage(s.file, { page: s.page, pixelLimit: options.pixelLimit });
    p.catch(() => {}); // handled when its turn comes
    pending[k] = p;
  };
  for (let k = 0; k < DECODE_AHEAD; k++) start(k);
  for (const [k, s] of sources.entries()) {
    const img: DecodedImage = await pending[k];
    delete pending[k];
    start(k + DECODE_AHEAD);
    if (!seenFiles.has(s.file)) {
      inputBytes += img.inputBytes;
      seenFiles.add(s.file);
    }
    const f: StackFrame = {
      width: img.width,
      height: img.height,
      bitDepth: img.bitDepth,
      channels: img.channels,
      planes: img.planes,
      name: s.name,
      sourceSha256: img.sourceSha256,
      file: s.page !== undefined ? `${s.file} (page ${s.page})` : s.file,
    };
    frames.push(f);
    checkSeries(frames.length === 1 ? [f, f] : [frames[0], f]);
  }
  return { frames, inputBytes, sources };
}
