/**
 * The app's view of a stack file (`layout: "stack"`, see docs/format.md "Stack layout"): read the file
 * once, keep its random-access reader, and hand out one decoded frame at a time in the factor-set layout
 * of src-main/contract/api.ts (`src.p` blocks) with the stack's summary in `header.stack`.
 *
 * Per-frame PSNR/SSIM come from the file's SQAL chunk, measured against the originals when the stack was
 * written; a file without that chunk gives sizes only, and the page says so.
 */
import { readFile, stat } from 'node:fs/promises';
import { basename } from 'node:path';
import { encodeFactorSet, InputError, type StackFrameInfo, UsageError } from '../../contract';
import { isStackContainer } from '../../engine/codec/stack-codec';
import { openStack, type StackReader } from '../../engine/lowrank/stack-frames';
import { describeFileError } from '../image/open-file';
import type { OriginalFrame } from './stack-originals';

export interface StackSession {
  file: string;
  mtimeMs: number;
  size: number;
  reader: StackReader;
}

const finite = (v: number | undefined) => (v !== undefined && Number.isFinite(v) ? v : undefined);

/** The frame with the lowest recorded PSNR (first of equals), or undefined when none is recorded. */
function worstFrame(table: { psnr?: number }[]): StackFrameInfo['worst'] {
  let worst: StackFrameInfo['worst'];
  table.forEach((f, frame) => {
    const p = finite(f.psnr);
    if (p !== undefined && (!worst || p < worst.psnr)) worst = { frame, psnr: p };
  });
  return worst;
}

const CHANNEL_NAMES: Record<string, string[]> = { gray: ['gray'], ycbcr: ['Y', 'Cb', 'Cr'] };

async function load(file: string): Promise<StackSession> {
  let bytes: Uint8Array;
  let st: Awaited<ReturnType<typeof stat>>;
  try {
    st = await stat(file);
    bytes = new Uint8Array(await readFile(file));
  } catch (err) {
    throw describeFileError(file, err);
  }
  if (!isStackContainer(bytes, file))
    throw new InputError(
      file,
      'is not a stack file (a .rkf written by `rankfold compress --stack`); open single scans as images',
    );
  return { file, mtimeMs: st.mtimeMs, size: st.size, reader: openStack(bytes, file) };
}

/**
 * Decode frame `frame` of `file`, reusing `current` when it is the same unchanged file.
 * @throws UsageError for a frame index out of range; FormatError for a damaged file.
 */
export async function openStackFrame(
  current: StackSession | undefined,
  file: string,
  frame: number,
  original?: (h: StackReader['header'], frame: number) => Promise<OriginalFrame>,
): Promise<{ session: StackSession; data: ArrayBuffer }> {
  let session = current;
  if (!session || session.file !== file || (await stat(file)).mtimeMs !== session.mtimeMs)
    session = await load(file);
  const h = session.reader.header;
  if (frame >= h.frameCount)
    throw new UsageError(
      `${file}: frame ${frame + 1} does not exist; the stack holds frames 1–${h.frameCount}`,
    );
  const planes = session.reader.frame(frame);
  const names = CHANNEL_NAMES[h.colour] ?? h.spectrum.map((_, c) => `c${c}`);
  const info: StackFrameInfo = {
    name: basename(file),
    frame,
    frameCount: h.frameCount,
    frameNames: h.frameTable.map((f) => f.name ?? null),
    ranks: h.ranks,
    spectrum: h.spectrum.map((sigma, c) => ({ channel: names[c] ?? `c${c}`, sigma })),
    fileBytes: session.size,
    rawBytes: h.width * h.height * h.channels * (h.bitDepth / 8) * h.frameCount,
    bitDepth: h.bitDepth,
    residual: h.frameTable[frame].residual.some(Boolean),
    // JSON has no ∞ (a frame decoded exactly): such a PSNR is left out and shows as a dash.
    psnr: finite(h.frameTable[frame].psnr),
    ssim: finite(h.frameTable[frame].ssim),
    worst: worstFrame(h.frameTable),
  };
  const samples = (p: ArrayLike<number>) => (h.bitDepth === 16 ? Uint16Array.from(p) : Uint8Array.from(p));
  const arrays: Record<string, Uint8Array | Uint16Array> = {};
  planes.forEach((p, c) => {
    arrays[`src.${c}`] = samples(p);
  });
  if (original) {
    const o = await original(h, frame);
    info.original = { shown: !!o.planes, note: o.note };
    o.planes?.forEach((p, c) => {
      arrays[`orig.${c}`] = samples(p);
    });
  }
  const packed = encodeFactorSet(
    {
      width: h.width,
      height: h.height,
      channels: h.channels === 1 ? ['gray'] : ['r', 'g', 'b'],
      ranks: planes.map(() => 0),
      energy: planes.map(() => 0),
      peak: h.bitDepth === 16 ? 65535 : 255,
      complete: false,
      stack: info,
    },
    arrays,
  );
  return {
    session,
    data: packed.buffer.slice(packed.byteOffset, packed.byteOffset + packed.byteLength) as ArrayBuffer,
  };
}
