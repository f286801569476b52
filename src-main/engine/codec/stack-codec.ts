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
 * The number of eigen-frames minimises D + λ·bytes and a residual is kept when the squared error it
 * removes is at least λ per byte spent, λ = 16·ln2·Δ²/12 (the slope dD/dR of a uniform quantiser at high
 * rate, D = Δ²/12 per sample, 6.02 dB per bit — common practice); see ./stack-plan and ./stack-encode.
 *
 * Random access: one frame needs the header, the mean, the k eigen-frames, its coefficient row and its
 * own residual — never another frame's data. Full decodes call the same per-frame routine, so a frame
 * is bit-identical either way.
 *
 * Chunks (ids are u32): HEAD (`layout: "stack"`; JSON in stack version 2, compact in version 3), SMEA c (mean of channel c), SBAS c·65536+i
 * (eigen-frame i of channel c), SCOF c (float32 big-endian: per frame, d_j then c_j0…c_j(k−1)),
 * SRES c·65536+j (residual of frame j, channel c), SQAL 0 (float32 big-endian: per frame, PSNR then SSIM of
 * the decoded frame against its source, NaN = not recorded). Planes are coded by ./wavelet-plane with
 * coefficient coder 1 (stack version 2, container 1.0–1.1) or 2 (version 3, container 1.4); the header and
 * its checks are in ./stack-header, the writer in ./stack-encode. This module works on coded planes (Y, or Y/Cb/Cr); the colour
 * transform to and from source samples is in lowrank/stack-frames.ts (PreparedStack.toSource).
 */
import { FormatError } from '../../contract/errors';
import { rebuildFrame } from '../stack/frame-svd';
import { decodeCompactHeader } from './compact-header';
import { type ContainerView, readContainer, VERSION_MINOR_CODER2 } from './container';
import { encodePlanned } from './stack-encode';
import {
  checkStackHeader,
  chunkId,
  type EncodedStack,
  type PreparedStack,
  STACK_CONTAINER_MINOR,
  STACK_LAYOUT,
  STACK_VERSION,
  type StackHeader,
  type StackHeaderJson,
  type StackInput,
  type StackParams,
} from './stack-header';
import { DEFAULT_CALIBRATION, planAt } from './stack-plan';
import { framePsnrOf } from './stack-quality';
import { decodePlane } from './wavelet-plane';

/** Decode UTF-8 (RFC 3629); malformed sequences become U+FFFD. */
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

/**
 * Encode a prepared series at one quantiser step: `rank` eigen-frames per channel, or the number the
 * equal-slope planner (./stack-plan) chooses at this step.
 * @example const e = encodeStack(prepareStack(input), { step: 4 }); e.bytes // the .rkf file
 */
export function encodeStack(prep: PreparedStack, params: StackParams): EncodedStack {
  const residuals = params.residuals !== false;
  const an = prep.analysis();
  const ranks =
    params.rank !== undefined
      ? an.channels.map((ch) => Math.min(params.rank as number, ch.maxRank))
      : planAt(an, params.step, {
          residuals,
          calibration: DEFAULT_CALIBRATION,
          fixedBytes: () => 0,
        }).channels.map((p) => p.rank);
  return encodePlanned(prep, { step: params.step, ranks, residuals });
}

/** The header value of a stack file: JSON in stack version 2 (container 1.0–1.1), compact from 1.4. */
function headerValue(view: ContainerView): unknown {
  const raw = view.payload(0);
  if (view.version.minor >= STACK_CONTAINER_MINOR) return decodeCompactHeader(raw);
  return JSON.parse(utf8Text(raw));
}

/** True when the container's HEAD says `layout: "stack"`. Cheap: reads only the header chunk. */
export function isStackContainer(bytes: Uint8Array, file = 'input'): boolean {
  const view = readContainer(bytes, file, false);
  if (view.version.minor === VERSION_MINOR_CODER2) return false;
  try {
    const h = headerValue(view) as { layout?: unknown } | null;
    return h?.layout === STACK_LAYOUT;
  } catch {
    return false;
  }
}

/** Random-access reader of a stack container. Verifies the CRC of each chunk it uses, on first use. */
export interface StackReaderOf<Frame> {
  header: StackHeader;
  /** Frame j (0-based), one plane per channel. */
  frame(j: number): Frame;
  /** Check every chunk's CRC-32 now (a whole-file expand does this before writing anything). */
  verify(): void;
  /** Chunks the reader has verified and decoded so far (for tests of random access). */
  readonly touched: ReadonlySet<string>;
}

/** A reader whose frames are the coded planes (Y, or Y/Cb/Cr), before rounding. */
export type StackPlaneReader = StackReaderOf<Float64Array[]>;

/**
 * Open a stack container held in memory, its header checked against its chunks (./stack-header).
 * @throws FormatError naming `file` for a damaged, truncated or inconsistent file.
 */
export function openStackPlanes(bytes: Uint8Array, file: string): StackPlaneReader {
  const view = readContainer(bytes, file, false);
  const fail = (problem: string): never => {
    throw new FormatError(file, problem);
  };
  // Version 1.3 is written for two-layer images only.
  if (view.version.minor === VERSION_MINOR_CODER2)
    fail('is not a stack file (it is a two-layer image file); use `rankfold expand` without --frame');
  let header: StackHeaderJson & { frameTable?: StackHeader['frameTable'] };
  try {
    header = headerValue(view) as typeof header;
  } catch (err) {
    if (err instanceof FormatError) throw err;
    return fail('is damaged: its header cannot be read');
  }
  checkStackHeader(view, header, file);
  const { width, height, frameCount, channels } = header;
  const coded = channels === 3 ? 3 : 1;
  const n = width * height;
  const touched = new Set<string>();
  // Stack version 2 planes use coefficient coder 1 (frozen), version 3 coder 2.
  const coder = header.stackVersion === STACK_VERSION ? 2 : 1;
  const chunk = (type: string, id: number): Uint8Array => {
    const k = view.find(type, id);
    if (k < 0) fail(`is truncated or damaged: chunk ${type} #${id} is missing`);
    touched.add(`${type}#${id}`);
    return view.payload(k);
  };
  const plane = (type: string, id: number, step: number): Float64Array => {
    const b = chunk(type, id);
    try {
      return decodePlane(b, width, height, step, coder);
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
      return planes;
    },
  };
}

/** Per-frame PSNR (dB, pooled over channels) of decoded frames against the input. */
export function framePsnr(input: StackInput, decoded: Float32Array[][]): number[] {
  return input.frames.map((_, j) => framePsnrOf(input, j, decoded[j]));
}
