/**
 * Stack layout of the .rkf container: a series of same-size frames coded jointly.
 *
 * Model (see src-main/engine/stack/frame-svd.ts): per channel (Y, or Y/Cb/Cr for colour, JFIF full
 * range), frame j is rebuilt as
 *     F̂_j = μ̂ + d_j·1 + Σ_{i<k} c_{ji} · P̂_i  [+ R̂_j]
 * with μ̂ the coded mean frame, P̂_i the coded eigen-frames (σ-weighted: P_i = Y·v_i), d_j and c_j
 * float32 coefficients refitted by least squares against the *decoded* planes, and R̂_j an optional
 * coded residual for frame j kept only where it pays at the operating slope.
 *
 * Rate–distortion: one pixel-domain step Δ for every plane whose error reaches the frames with unit
 * weight (eigen-frames: Σ_j c_ji² ≈ 1; residuals), and Δ/√N for the mean frame (its error reaches all N
 * frames). Equal step = equal distortion slope, the high-rate condition for an optimal allocation
 * (reverse water-filling; Cover & Thomas, Elements of Information Theory, 2nd ed., §10.3.3, from memory).
 * An eigen-frame or a residual is kept when the squared error it removes is at least λ per byte spent,
 * λ = 16·ln2·Δ²/12 (the slope dD/dR of a uniform quantiser at high rate, D = Δ²/12 per sample, 6.02 dB
 * per bit — common practice).
 *
 * Random access: one frame needs the header, the mean, the k eigen-frames, its coefficient row and its
 * own residual — never another frame's data. Full decodes call the same per-frame routine, so a frame
 * is bit-identical either way.
 *
 * Chunks (ids are u32): HEAD (JSON, `layout: "stack"`), SMEA c (mean of channel c), SBAS c·65536+i
 * (eigen-frame i of channel c), SCOF c (float32 big-endian: per frame, d_j then c_j0…c_j(k−1)),
 * SRES c·65536+j (residual of frame j, channel c), SQAL 0 (float32 big-endian: per frame, PSNR then SSIM of
 * the decoded frame against its source, NaN = not recorded). Planes are coded by stack-plane.ts.
 */
import { FormatError } from '../../contract/errors';
import { solveSpdRidge } from '../linalg';
import { rgbToYcbcr, toSamples, ycbcrToRgb } from '../lowrank/colour';
import { psnrFromMse, ssim } from '../metrics';
import { eigenFrameOf, type FrameModeSvd, frameModeSvd, rebuildFrame } from '../stack/frame-svd';
import { asciiJson } from './ascii-json';
import { type Chunk, isCritical, readContainer, refuseUnknownCritical, writeContainer } from './container';
import { decodePlane, encodePlane } from './stack-plane';

export const STACK_LAYOUT = 'stack';
/** 2: planes coded with the codec's range coder (two-speed adaptive contexts) and the SQAL chunk. */
export const STACK_VERSION = 2;
/** Largest number of eigen-frames considered per channel. */
export const MAX_STACK_RANK = 64;
/** λ per byte in units of Δ²: 8 bits · 2·ln2 · (1/12). */
const LAMBDA_PER_BYTE = (16 * Math.LN2) / 12;

/** One frame of a series: one plane per channel (gray: [Y]; colour: [R, G, B]), on the source scale. */
export interface StackFrameInput {
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
interface StackHeaderJson extends Omit<StackHeader, 'frameTable'> {
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
  /** Decoded frames on the source scale (rounded, clamped): [frame][channel]. */
  decoded: Float32Array[][];
  split: StackByteSplit;
  /** The chunks of `bytes`, so the frame-quality chunk can be filled in without coding again. */
  chunks: Chunk[];
}

/** Bytes of the SQAL chunk for N frames: a PSNR and an SSIM per frame, float32. Fixed, so budgets count it from the first trial. */
const qualityBytes = (N: number) => 8 * N;

const chunkId = (c: number, i: number) => c * 65536 + i;

/**
 * Decode UTF-8 (RFC 3629); malformed sequences become U+FFFD. Not contract/utf8.ts `utf8Decode`: that one
 * reads malformed input differently (a lone 0x80 decodes as U+0000, F7 BF BF BF throws a RangeError), so a
 * damaged stack header would fail differently; the two can merge once the contract's decoder maps
 * malformed bytes to U+FFFD the same way.
 */
function utf8Text(b: Uint8Array): string {
  let out = '';
  for (let i = 0; i < b.length; ) {
    const c = b[i++];
    let cp = 0xfffd;
    if (c < 0x80) cp = c;
    else if (c >= 0xc2 && c < 0xe0 && i < b.length) cp = ((c & 0x1f) << 6) | (b[i++] & 0x3f);
    else if (c >= 0xe0 && c < 0xf0 && i + 1 < b.length) {
      cp = ((c & 0x0f) << 12) | ((b[i] & 0x3f) << 6) | (b[i + 1] & 0x3f);
      i += 2;
    } else if (c >= 0xf0 && c < 0xf5 && i + 2 < b.length) {
      cp = ((c & 0x07) << 18) | ((b[i] & 0x3f) << 12) | ((b[i + 1] & 0x3f) << 6) | (b[i + 2] & 0x3f);
      i += 3;
    }
    out += String.fromCodePoint(cp);
  }
  return out;
}

/** Validate sizes and prepare the series. @throws RangeError on inconsistent frames (callers name files first). */
export function prepareStack(input: StackInput, maxRank = MAX_STACK_RANK): PreparedStack {
  const { width, height, channels, frames } = input;
  const n = width * height;
  if (frames.length < 2) throw new RangeError(`a stack needs at least 2 frames, got ${frames.length}`);
  frames.forEach((f, j) => {
    if (f.planes.length !== channels)
      throw new RangeError(`frame ${j} has ${f.planes.length} channels; expected ${channels}`);
    for (const p of f.planes)
      if (p.length !== n)
        throw new RangeError(`frame ${j} has a plane of ${p.length} samples; expected ${n}`);
  });
  const coded: Float64Array[][] = channels === 3 ? [[], [], []] : [[]];
  for (const f of frames) {
    if (channels === 3) {
      const ycc = rgbToYcbcr(f.planes[0], f.planes[1], f.planes[2], input.bitDepth);
      for (let c = 0; c < 3; c++) coded[c].push(ycc[c]);
    } else coded[0].push(Float64Array.from(f.planes[0]));
  }
  const svd = coded.map((planes) => frameModeSvd(planes, width, height));
  const eigen = coded.map((planes, c): LazyEigenFrames => {
    const cache: Float64Array[] = [];
    const length = Math.min(maxRank, frames.length);
    return {
      length,
      get(i: number) {
        if (i < 0 || i >= length) throw new RangeError(`eigen-frame ${i} of ${length}`);
        cache[i] ??= eigenFrameOf(planes, svd[c], i);
        return cache[i];
      },
    };
  });
  return { input, coded, svd, eigen };
}

function sse(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) {
    const d = a[i] - b[i];
    s += d * d;
  }
  return s;
}

function energy(a: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * a[i];
  return s;
}

function f32be(values: ArrayLike<number>): Uint8Array {
  const out = new Uint8Array(values.length * 4);
  const dv = new DataView(out.buffer);
  for (let i = 0; i < values.length; i++) dv.setFloat32(i * 4, values[i], false);
  return out;
}

/** Planes back to source samples: YCbCr → RGB for colour, then round and clamp. */
function toSource(planes: Float64Array[], channels: 1 | 3, bitDepth: 8 | 16): Float32Array[] {
  const max = bitDepth === 16 ? 65535 : 255;
  if (channels === 1) return [toSamples(planes[0], max)];
  return ycbcrToRgb(planes[0], planes[1], planes[2], bitDepth).map((p) => toSamples(p, max));
}

/**
 * Encode a prepared series at one quantiser step.
 * @example const e = encodeStack(prepareStack(input), { step: 4 }); e.bytes // the .rkf file
 */
export function encodeStack(prep: PreparedStack, params: StackParams): EncodedStack {
  const { input, coded, svd, eigen } = prep;
  const { width, height, channels, bitDepth } = input;
  const N = input.frames.length;
  const n = width * height;
  const step = params.step;
  if (!(step > 0 && Number.isFinite(step)))
    throw new RangeError(`stack quantiser step must be > 0, got ${step}`);
  const lambda = LAMBDA_PER_BYTE * step * step;
  const chunks: Chunk[] = [];
  const split: StackByteSplit = { header: 0, mean: 0, basis: 0, coefficients: 0, residuals: 0, container: 0 };
  const ranks: number[] = [];
  const residualFlags: boolean[][] = Array.from({ length: N }, () => []);
  const rebuilt: Float64Array[][] = Array.from({ length: N }, () => []);
  const body: Chunk[] = [];
  for (let c = 0; c < coded.length; c++) {
    const frames = coded[c];
    const mean = encodePlane(svd[c].mean, width, height, step / Math.sqrt(N));
    body.push({ type: 'SMEA', id: c, payload: mean.bytes });
    split.mean += mean.bytes.length;
    // Eigen-frames: fixed rank, or keep while the captured energy pays λ per byte.
    const basis: Float64Array[] = [];
    const kmax = params.rank !== undefined ? Math.min(params.rank, eigen[c].length) : eigen[c].length;
    for (let i = 0; i < kmax; i++) {
      const P = eigen[c].get(i);
      const code = encodePlane(P, width, height, step);
      const gain = svd[c].sigma[i] ** 2 - sse(P, code.decoded);
      if (params.rank === undefined && !(gain >= lambda * (code.bytes.length + 4 * N))) break;
      basis.push(code.decoded);
      body.push({ type: 'SBAS', id: chunkId(c, i), payload: code.bytes });
      split.basis += code.bytes.length;
    }
    const k = basis.length;
    ranks.push(k);
    // Least-squares coefficients [d_j, c_j] against the decoded planes [1, P̂_0 … P̂_{k−1}].
    const m = k + 1;
    const G = new Float64Array(m * m);
    const ones = (i: number) => (i === 0 ? null : basis[i - 1]);
    for (let a = 0; a < m; a++)
      for (let b = a; b < m; b++) {
        const pa = ones(a);
        const pb = ones(b);
        let s = 0;
        if (!pa && !pb) s = n;
        else if (!pa) for (let p = 0; p < n; p++) s += (pb as Float64Array)[p];
        else if (!pb) for (let p = 0; p < n; p++) s += pa[p];
        else for (let p = 0; p < n; p++) s += pa[p] * pb[p];
        G[a * m + b] = G[b * m + a] = s;
      }
    const coef = new Float32Array(N * m);
    for (let j = 0; j < N; j++) {
      const F = frames[j];
      const rhs = new Float64Array(m);
      for (let p = 0; p < n; p++) rhs[0] += F[p] - mean.decoded[p];
      for (let i = 0; i < k; i++) {
        const P = basis[i];
        let s = 0;
        for (let p = 0; p < n; p++) s += P[p] * (F[p] - mean.decoded[p]);
        rhs[i + 1] = s;
      }
      coef.set(solveSpdRidge(G, rhs, m), j * m);
    }
    const cof = f32be(coef);
    body.push({ type: 'SCOF', id: c, payload: cof });
    split.coefficients += cof.length;
    for (let j = 0; j < N; j++) {
      const row = coef.subarray(j * m, (j + 1) * m);
      const rec = rebuildFrame(mean.decoded, row[0], basis, row.subarray(1));
      let keep = false;
      if (params.residuals !== false) {
        const R = new Float64Array(n);
        const F = frames[j];
        for (let p = 0; p < n; p++) R[p] = F[p] - rec[p];
        const code = encodePlane(R, width, height, step);
        if (code.nonZero > 0) {
          const gain = energy(R) - sse(R, code.decoded);
          if (gain >= lambda * code.bytes.length) {
            keep = true;
            for (let p = 0; p < n; p++) rec[p] += code.decoded[p];
            body.push({ type: 'SRES', id: chunkId(c, j), payload: code.bytes });
            split.residuals += code.bytes.length;
          }
        }
      }
      residualFlags[j].push(keep);
      rebuilt[j].push(rec);
    }
  }
  const header: StackHeader = {
    format: 'rankfold',
    layout: 'stack',
    stackVersion: STACK_VERSION,
    width,
    height,
    bitDepth,
    channels,
    colour: channels === 3 ? 'ycbcr' : 'gray',
    frameCount: N,
    model: 'frame-svd',
    planeCoder: 'cdf97-rc',
    step,
    ranks,
    spectrum: svd.map((s) => Array.from(s.sigma, (v) => Number(v.toPrecision(4)))),
    frameTable: input.frames.map((f, j) => ({
      name: f.name,
      sourceSha256: f.sourceSha256,
      residual: residualFlags[j],
    })),
    meta: input.meta,
  };
  const { frameTable, ...fixed } = header;
  const serial: StackHeaderJson = {
    ...fixed,
    frameNames: frameTable.map((f) => f.name ?? null),
    residualMask: ranks.map((_, c) => frameTable.map((f) => (f.residual[c] ? '1' : '0')).join('')),
  };
  const head = asciiJson(serial);
  const hashes = new Uint8Array(32 * N);
  frameTable.forEach((f, j) => {
    if (f.sourceSha256 && /^[0-9a-f]{64}$/i.test(f.sourceSha256))
      for (let b = 0; b < 32; b++)
        hashes[j * 32 + b] = Number.parseInt(f.sourceSha256.slice(2 * b, 2 * b + 2), 16);
  });
  // Frame quality is measured on the decoded frames after the rate control has chosen this encode
  // (recordFrameQuality); until then the chunk holds NaN, "not recorded", at its final size.
  const quality = f32be(new Float32Array(2 * N).fill(Number.NaN));
  chunks.push(
    { type: 'HEAD', id: 0, payload: head },
    { type: 'SHSH', id: 0, payload: hashes },
    { type: 'SQAL', id: 0, payload: quality },
    ...body,
  );
  split.header = head.length + hashes.length + quality.length;
  const bytes = writeContainer(chunks);
  split.container =
    bytes.length - split.header - split.mean - split.basis - split.coefficients - split.residuals;
  const decoded = rebuilt.map((planes) => toSource(planes, channels, bitDepth));
  return { bytes, header, decoded, split, chunks };
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
  const bytes = writeContainer(chunks);
  if (bytes.length !== e.bytes.length || payload.length !== qualityBytes(N))
    throw new Error('internal: recording frame quality changed the stack file size');
  const frameTable = e.header.frameTable.map((f, j) => ({
    ...f,
    psnr: Number.isNaN(values[2 * j]) ? undefined : values[2 * j],
    ssim: Number.isNaN(values[2 * j + 1]) ? undefined : values[2 * j + 1],
  }));
  return { ...e, bytes, chunks, header: { ...e.header, frameTable } };
}

/** True when the container's HEAD says `layout: "stack"`. Cheap: reads only the header chunk. */
export function isStackContainer(bytes: Uint8Array, file = 'input'): boolean {
  const view = readContainer(bytes, file, false);
  try {
    const h = JSON.parse(utf8Text(view.payload(0)));
    return h?.layout === STACK_LAYOUT;
  } catch {
    return false;
  }
}

/** Chunk types of the stack layout (the container's own INDX and fchk aside). */
const STACK_CHUNKS = new Set(['HEAD', 'SHSH', 'SQAL', 'SMEA', 'SBAS', 'SCOF', 'SRES']);

/** Random-access reader of a stack container. Verifies the CRC of each chunk it uses, on first use. */
export interface StackReader {
  header: StackHeader;
  /** Decode frame j (0-based): one plane per source channel, rounded and clamped. */
  frame(j: number): Float32Array[];
  /** Check every chunk's CRC-32 now (a whole-file expand does this before writing anything). */
  verify(): void;
  /** Chunks the reader has verified and decoded so far (for tests of random access). */
  readonly touched: ReadonlySet<string>;
}

/**
 * Open a stack container held in memory.
 * @throws FormatError naming `file` for a damaged, truncated or inconsistent file.
 */
export function openStack(bytes: Uint8Array, file: string): StackReader {
  const view = readContainer(bytes, file, false);
  const fail = (problem: string): never => {
    throw new FormatError(file, problem);
  };
  let header: StackHeaderJson & { frameTable?: StackHeader['frameTable'] };
  try {
    header = JSON.parse(utf8Text(view.payload(0)));
  } catch (err) {
    if (err instanceof FormatError) throw err;
    return fail('is damaged: its header is not valid JSON');
  }
  if (header?.layout !== STACK_LAYOUT)
    fail('is not a stack file (its header has no stack layout); use `rankfold expand` without --frame');
  if (header.stackVersion !== STACK_VERSION)
    fail(
      `uses stack layout version ${header.stackVersion}, which this Rankfold does not read (it reads ${STACK_VERSION})`,
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
  const n = width * height;
  const touched = new Set<string>();
  const chunk = (type: string, id: number): Uint8Array => {
    const k = view.find(type, id);
    if (k < 0) fail(`is truncated or damaged: chunk ${type} #${id} is missing`);
    touched.add(`${type}#${id}`);
    return view.payload(k);
  };
  const plane = (type: string, id: number, step: number): Float64Array => {
    const b = chunk(type, id);
    try {
      return decodePlane(b, width, height, step);
    } catch (err) {
      return fail(`is damaged: chunk ${type} #${id} does not decode: ${(err as Error).message}`);
    }
  };
  const means: Float64Array[] = [];
  const bases: Float64Array[][] = [];
  const coefs: Float32Array[] = [];
  const channelModel = (c: number) => {
    if (!means[c]) {
      means[c] = plane('SMEA', c, header.step / Math.sqrt(frameCount));
      const k = header.ranks[c];
      bases[c] = Array.from({ length: k }, (_, i) => plane('SBAS', chunkId(c, i), header.step));
      const raw = chunk('SCOF', c);
      if (raw.length !== frameCount * (k + 1) * 4)
        fail(`is damaged: coefficient chunk SCOF #${c} has the wrong length`);
      const dv = new DataView(raw.buffer, raw.byteOffset, raw.byteLength);
      coefs[c] = Float32Array.from({ length: raw.length / 4 }, (_, i) => dv.getFloat32(i * 4, false));
    }
    return { mean: means[c], basis: bases[c], coef: coefs[c] };
  };
  const full = header as unknown as StackHeader;
  return {
    header: full,
    touched,
    verify() {
      for (let k = 0; k < view.entries.length; k++) view.payload(k);
    },
    frame(j: number) {
      if (!Number.isInteger(j) || j < 0 || j >= frameCount)
        throw new FormatError(
          file,
          `has ${frameCount} frames (0–${frameCount - 1}); frame ${j} does not exist`,
        );
      const planes: Float64Array[] = [];
      for (let c = 0; c < coded; c++) {
        const { mean, basis, coef } = channelModel(c);
        const m = basis.length + 1;
        const row = coef.subarray(j * m, (j + 1) * m);
        const rec = rebuildFrame(mean, row[0], basis, row.subarray(1));
        if (full.frameTable[j].residual[c]) {
          const R = plane('SRES', chunkId(c, j), header.step);
          for (let p = 0; p < n; p++) rec[p] += R[p];
        }
        planes.push(rec);
      }
      return toSource(planes, channels, bitDepth);
    },
  };
}

/** Decode one frame of an in-memory stack file (the app's frame slider). @throws FormatError. */
export function decodeStackFrame(bytes: Uint8Array, j: number, file = 'stack'): Float32Array[] {
  return openStack(bytes, file).frame(j);
}

/** Per-frame PSNR (dB, pooled over channels) of decoded frames against the input. */
export function framePsnr(input: StackInput, decoded: Float32Array[][]): number[] {
  const max = input.bitDepth === 16 ? 65535 : 255;
  return input.frames.map((f, j) => {
    let s = 0;
    for (let c = 0; c < f.planes.length; c++) s += sse(f.planes[c], decoded[j][c]);
    return psnrFromMse(s / (f.planes.length * input.width * input.height), max);
  });
}

/** Per-frame SSIM (Wang et al. 2004 via the metrics module; mean over channels) of decoded frames. */
export function frameSsim(input: StackInput, decoded: Float32Array[][]): number[] {
  const max = input.bitDepth === 16 ? 65535 : 255;
  if (input.width < 11 || input.height < 11) return input.frames.map(() => Number.NaN);
  return input.frames.map((f, j) => {
    let s = 0;
    for (let c = 0; c < f.planes.length; c++)
      s += ssim(f.planes[c], decoded[j][c], input.width, input.height, max);
    return s / f.planes.length;
  });
}
