/**
 * The stack layout's header and chunk plan (see ./stack-codec for the model and the chunk list): the
 * types of a series and of its coded file, the header as stored, the checks a reader makes of the header
 * against the chunks before it decodes anything, and the recording of frame quality (SQAL).
 */
import { FormatError } from '../../contract/errors';
import type { FrameModeSvd } from '../stack/frame-svd';
import {
  type Chunk,
  type ContainerView,
  isCritical,
  refuseUnknownCritical,
  writeContainer,
} from './container';
import type { StackAnalysis } from './stack-analysis';
import type { CodedStack } from './stack-encode';

export const STACK_LAYOUT = 'stack';
/**
 * Stack layout versions: 2 (container 1.0/1.1, JSON header, coefficient coder 1; still read) and 3, written
 * now (container 1.4: compact framing and header, coefficient coder 2).
 */
export const STACK_VERSION = 3;
const STACK_VERSION_CODER1 = 2;
/** Container minor version of stack-layout-3 files (1.3 is the two-layer image file). */
export const STACK_CONTAINER_MINOR = 4;
/** Largest number of eigen-frames considered per channel. */
export const MAX_STACK_RANK = 64;

/** One frame of a series: one plane per channel (gray: [Y]; colour: [R, G, B]), on the source scale. */
interface StackFrameInput {
  planes: ArrayLike<number>[];
  /** File name or page label, kept in the frame table. */
  name?: string;
  /** SHA-256 of the decoded source samples (see docs/format.md). */
  sourceSha256?: string;
}

export interface StackInput {
  width: number;
  height: number;
  bitDepth: 8 | 16;
  /** 1 = gray, 3 = RGB. */
  channels: 1 | 3;
  frames: StackFrameInput[];
  /** Free-form metadata carried in the header (ICC as base64, density…). */
  meta?: Record<string, unknown>;
}

export interface StackHeader {
  format: 'rankfold';
  layout: 'stack';
  stackVersion: number;
  width: number;
  height: number;
  bitDepth: 8 | 16;
  channels: 1 | 3;
  /** Coded colour model: 'gray' or 'ycbcr' (JFIF full range). */
  colour: 'gray' | 'ycbcr';
  frameCount: number;
  model: 'frame-svd';
  planeCoder: 'cdf97-rc';
  /** Pixel-domain quantiser step Δ of eigen-frames and residuals. */
  step: number;
  /** Number of eigen-frames per coded channel. */
  ranks: number[];
  /** Frame-mode singular values per coded channel, after mean removal (sample scale). */
  spectrum: number[][];
  frameTable: Array<{
    name?: string;
    sourceSha256?: string;
    residual: boolean[];
    /** PSNR (dB, pooled over channels) and SSIM of the decoded frame against its source, when recorded (SQAL). */
    psnr?: number;
    ssim?: number;
  }>;
  meta?: Record<string, unknown>;
}

/**
 * The header as stored in HEAD: the frame table is split into `frameNames`, one `residualMask` string
 * per coded channel ('1' = frame j has an SRES chunk), and the SHSH chunk (32 bytes of SHA-256 per frame,
 * all zero when unknown).
 */
export interface StackHeaderJson extends Omit<StackHeader, 'frameTable'> {
  frameNames: Array<string | null>;
  residualMask: string[];
}

/** Eigen-frames of one channel, formed on demand (most encodes need only the first few). */
export interface LazyEigenFrames {
  readonly length: number;
  get(i: number): Float64Array;
}

/** A series prepared once (colour transform, frame-mode SVD, eigen-frames) for encodes at many steps. */
export interface PreparedStack {
  input: StackInput;
  /** Coded planes: [channel][frame]. */
  coded: Float64Array[][];
  svd: FrameModeSvd[];
  /** Eigen-frames per channel, up to min(N, MAX_STACK_RANK), computed on first use and kept. */
  eigen: LazyEigenFrames[];
  /** One frame's coded planes back to source samples: YCbCr → RGB for colour, then rounded and clamped. */
  toSource(planes: Float64Array[]): Float32Array[];
  /** The series in the wavelet domain (./stack-analysis), computed on first use and kept. */
  analysis(): StackAnalysis;
}

export interface StackParams {
  /** Pixel-domain step Δ (> 0) on the source scale. */
  step: number;
  /** Fixed number of eigen-frames per channel (default: chosen by the λ rule). */
  rank?: number;
  /** Code per-frame residuals where they pay (default true). */
  residuals?: boolean;
}

export interface StackByteSplit {
  header: number;
  mean: number;
  basis: number;
  coefficients: number;
  residuals: number;
  /** Chunk framing, index and trailer. */
  container: number;
}

export interface EncodedStack {
  bytes: Uint8Array;
  header: StackHeader;
  /** Decoded frames on the source scale (rounded, clamped): [frame][channel]; formed on first use. */
  readonly decoded: Float32Array[][];
  /**
   * Decoded frame j on demand, bit-identical to a reader's (./stack-quality); the planes' inverse
   * transforms are taken on the first call. Gray frames come back in a reused buffer.
   */
  frameOf(): (j: number) => Float32Array[];
  split: StackByteSplit;
  /** The chunks of `bytes`, so the frame-quality chunk can be filled in without coding again. */
  chunks: Chunk[];
  /** Every plane the encoder coded, the residuals it did not keep included (./stack-encode `assemble`). */
  coded?: CodedStack;
}

/** Bytes of the SQAL chunk for N frames: a PSNR and an SSIM per frame, float32. Fixed, so budgets count it from the first trial. */
const qualityBytes = (N: number) => 8 * N;

export const chunkId = (c: number, i: number) => c * 65536 + i;

/** Float32 values, big-endian (the SCOF and SQAL payloads). */
export function f32be(values: ArrayLike<number>): Uint8Array {
  const out = new Uint8Array(values.length * 4);
  const dv = new DataView(out.buffer);
  for (let i = 0; i < values.length; i++) dv.setFloat32(i * 4, values[i], false);
  return out;
}

/** HEAD as stored: the frame table split into frame names and one residual mask per coded channel. */
export function serialHeader(header: StackHeader): StackHeaderJson {
  const { frameTable, ...fixed } = header;
  return {
    ...fixed,
    frameNames: frameTable.map((f) => f.name ?? null),
    residualMask: fixed.ranks.map((_, c) => frameTable.map((f) => (f.residual[c] ? '1' : '0')).join('')),
  };
}

/** The SHSH chunk: 32 bytes of SHA-256 per frame, all zero when unknown. */
export function frameHashes(frameTable: StackHeader['frameTable']): Uint8Array {
  const N = frameTable.length;
  const hashes = new Uint8Array(32 * N);
  frameTable.forEach((f, j) => {
    if (f.sourceSha256 && /^[0-9a-f]{64}$/i.test(f.sourceSha256))
      for (let b = 0; b < 32; b++)
        hashes[j * 32 + b] = Number.parseInt(f.sourceSha256.slice(2 * b, 2 * b + 2), 16);
  });
  return hashes;
}

/** Chunk types of the stack layout (the container's own INDX and fchk aside). */
const STACK_CHUNKS = new Set(['HEAD', 'SHSH', 'SQAL', 'SMEA', 'SBAS', 'SCOF', 'SRES']);

/**
 * Check a stack file's parsed header against its chunks, and rebuild its frame table (names, hashes,
 * residual flags, recorded quality) in place.
 * @throws FormatError naming `file` for a damaged, truncated or inconsistent file.
 */
export function checkStackHeader(
  view: ContainerView,
  header: StackHeaderJson & { frameTable?: StackHeader['frameTable'] },
  file: string,
): void {
  const fail = (problem: string): never => {
    throw new FormatError(file, problem);
  };
  if (header?.layout !== STACK_LAYOUT)
    fail('is not a stack file (its header has no stack layout); use `rankfold expand` without --frame');
  // Version 3 lives in container 1.4 only, version 2 in 1.0–1.1 only: the file check covers the pairing.
  const expected = view.version.minor >= STACK_CONTAINER_MINOR ? STACK_VERSION : STACK_VERSION_CODER1;
  if (header.stackVersion !== expected)
    fail(
      header.stackVersion === STACK_VERSION || header.stackVersion === STACK_VERSION_CODER1
        ? `is damaged: stack layout version ${header.stackVersion} does not belong in container version 1.${view.version.minor}`
        : `uses stack layout version ${header.stackVersion}, which this Rankfold does not read (it reads ${STACK_VERSION_CODER1} and ${STACK_VERSION})`,
    );
  const { width, height, frameCount, channels, bitDepth } = header;
  const okInt = (v: unknown, lo: number, hi: number) =>
    Number.isInteger(v) && (v as number) >= lo && (v as number) <= hi;
  if (!okInt(width, 1, 1 << 20) || !okInt(height, 1, 1 << 20) || width * height > 2 ** 31)
    fail(`is damaged: frame size ${width}×${height} is not plausible`);
  if (!okInt(frameCount, 2, 1 << 16)) fail(`is damaged: frame count ${frameCount} is not plausible`);
  if (!(channels === 1 || channels === 3) || !(bitDepth === 8 || bitDepth === 16))
    fail(`is damaged: ${channels} channels at ${bitDepth} bits is not a stack format Rankfold writes`);
  const coded = channels === 3 ? 3 : 1;
  if (
    !Array.isArray(header.ranks) ||
    header.ranks.length !== coded ||
    !header.ranks.every((r) => okInt(r, 0, MAX_STACK_RANK))
  )
    fail('is damaged: the eigen-frame counts in the header are inconsistent');
  if (
    !Array.isArray(header.frameNames) ||
    header.frameNames.length !== frameCount ||
    !Array.isArray(header.residualMask) ||
    header.residualMask.length !== coded ||
    !header.residualMask.every((m) => typeof m === 'string' && m.length === frameCount && /^[01]*$/.test(m))
  )
    fail('is damaged: the frame table does not list every frame');
  const hk = view.find('SHSH', 0);
  if (hk < 0) fail('is truncated or damaged: the frame hash chunk SHSH is missing');
  const hashBytes = view.payload(hk);
  if (hashBytes.length !== 32 * frameCount)
    fail('is damaged: the frame hash chunk SHSH has the wrong length');
  // SQAL is optional (files written before it existed have none): absent or NaN = not recorded.
  const qk = view.find('SQAL', 0);
  let quality: Float32Array | undefined;
  if (qk >= 0) {
    const raw = view.payload(qk);
    if (raw.length !== qualityBytes(frameCount))
      fail('is damaged: the frame quality chunk SQAL has the wrong length');
    const dv = new DataView(raw.buffer, raw.byteOffset, raw.byteLength);
    quality = Float32Array.from({ length: 2 * frameCount }, (_, i) => dv.getFloat32(i * 4, false));
  }
  const recorded = (i: number) => {
    const v = quality?.[i];
    return v === undefined || Number.isNaN(v) ? undefined : v;
  };
  header.frameTable = header.frameNames.map((name, j) => {
    let hex = '';
    let known = false;
    for (let b = 0; b < 32; b++) {
      const v = hashBytes[j * 32 + b];
      if (v) known = true;
      hex += v.toString(16).padStart(2, '0');
    }
    return {
      name: name ?? undefined,
      sourceSha256: known ? hex : undefined,
      residual: header.residualMask.map((m) => m[j] === '1'),
      psnr: recorded(2 * j),
      ssim: recorded(2 * j + 1),
    };
  });
  if (!(header.step > 0 && Number.isFinite(header.step)))
    fail('is damaged: the quantiser step is not a positive number');
  refuseUnknownCritical(view, STACK_CHUNKS, file, 'stack');
  // Exactly the chunks the header calls for, each once: no stray eigen-frame or residual is ignored.
  const wanted = new Set(['HEAD#0', 'SHSH#0', 'SQAL#0']);
  for (let c = 0; c < coded; c++) {
    wanted.add(`SMEA#${c}`).add(`SCOF#${c}`);
    for (let i = 0; i < header.ranks[c]; i++) wanted.add(`SBAS#${chunkId(c, i)}`);
    for (let j = 0; j < frameCount; j++)
      if (header.residualMask[c][j] === '1') wanted.add(`SRES#${chunkId(c, j)}`);
  }
  const seen = new Set<string>();
  for (const e of view.entries) {
    if (!isCritical(e.type)) continue;
    const key = `${e.type}#${e.id}`;
    if (!wanted.has(key) || seen.has(key))
      fail(`is damaged: chunk ${e.type} #${e.id} is not one its header calls for, or is repeated`);
    seen.add(key);
  }
  for (const key of wanted)
    if (key !== 'SQAL#0' && !seen.has(key))
      fail(`is truncated or damaged: chunk ${key.replace('#', ' #')} is missing`);
}

/**
 * Record each frame's PSNR and SSIM (measured on `e.decoded`, the frames exactly as a reader rebuilds them)
 * in the SQAL chunk. The file keeps its size, so a byte budget met by `e` is still met.
 */
export function recordFrameQuality(e: EncodedStack, psnr: number[], ssim: number[]): EncodedStack {
  const N = e.header.frameCount;
  if (psnr.length !== N || ssim.length !== N)
    throw new RangeError(
      `frame quality needs ${N} PSNR and SSIM values, got ${psnr.length} and ${ssim.length}`,
    );
  const values = new Float32Array(2 * N);
  for (let j = 0; j < N; j++) {
    values[2 * j] = psnr[j];
    values[2 * j + 1] = ssim[j];
  }
  const payload = f32be(values);
  const chunks = e.chunks.map((c) => (c.type === 'SQAL' ? { ...c, payload } : c));
  const bytes = writeContainer(chunks, STACK_CONTAINER_MINOR);
  if (bytes.length !== e.bytes.length || payload.length !== qualityBytes(N))
    throw new Error('internal: recording frame quality changed the stack file size');
  const frameTable = e.header.frameTable.map((f, j) => ({
    ...f,
    psnr: Number.isNaN(values[2 * j]) ? undefined : values[2 * j],
    ssim: Number.isNaN(values[2 * j + 1]) ? undefined : values[2 * j + 1],
  }));
  // Not `...e`: spreading would evaluate `decoded` (every frame rebuilt) for nothing.
  return {
    bytes,
    chunks,
    header: { ...e.header, frameTable },
    split: e.split,
    coded: e.coded,
    frameOf: e.frameOf,
    get decoded() {
      return e.decoded;
    },
  };
}
