/**
 * A series of frames as source samples, in and out of the stack layout (../codec/stack-codec, which works
 * on coded planes): the colour transform (JFIF YCbCr for colour, ./colour) and the frame-mode SVD
 * (../stack/frame-svd) before an encode, and frames rebuilt as rounded, clamped samples when a file is read.
 */

import { analyseStack, type StackAnalysis } from '../codec/stack-analysis';
import { openStackPlanes, type StackReaderOf } from '../codec/stack-codec';
import {
  type LazyEigenFrames,
  MAX_STACK_RANK,
  type PreparedStack,
  type StackInput,
} from '../codec/stack-header';
import { measureFrames } from '../codec/stack-quality';
import { forwardWavelet, levelsFor } from '../codec/wavelet-transform';
import { rgbToYcbcr, toSamples, ycbcrToRgb } from '../colour';
import { eigenFrameOf, frameModeSvd } from '../stack/frame-svd';

/** Planes back to source samples: YCbCr → RGB for colour, then round and clamp. */
function toSourceSamples(planes: Float64Array[], channels: 1 | 3, bitDepth: 8 | 16): Float32Array[] {
  const max = bitDepth === 16 ? 65535 : 255;
  if (channels === 1) return [toSamples(planes[0], max)];
  return ycbcrToRgb(planes[0], planes[1], planes[2], bitDepth).map((p) => toSamples(p, max));
}

/** Frame j's coded planes (Y, or Y/Cb/Cr by JFIF), float64. */
function codedPlanesOf(input: StackInput, j: number): Float64Array[] {
  const f = input.frames[j];
  if (input.channels === 3) return rgbToYcbcr(f.planes[0], f.planes[1], f.planes[2], input.bitDepth);
  const p = f.planes[0];
  // One typed copy: Float64Array.from on a typed array goes through its iterator.
  return [p instanceof Float32Array ? new Float64Array(p) : Float64Array.from(p)];
}

/**
 * The wavelet coefficients of the coded planes of each frame `frames` yields, into `out[c][j]` (n values
 * each): the per-frame part of the stack analysis (../codec/stack-analysis), which threads can share.
 * Each plane is copied into its output and transformed there: the arithmetic of `analysePlane`
 * (../codec/wavelet-plane), without its per-call band map.
 */
export function transformFrames(input: StackInput, frames: Iterable<number>, out: Float64Array[][]): void {
  const { width, height } = input;
  const levels = levelsFor(width, height);
  for (const j of frames) {
    const gray = input.channels === 1 ? input.frames[j].planes[0] : undefined;
    const planes = gray instanceof Float32Array ? [gray] : codedPlanesOf(input, j);
    planes.forEach((p, c) => {
      const x = out[c][j];
      x.set(p);
      forwardWavelet(x, width, height, levels);
    });
  }
}

/**
 * PSNR (dB) and, when `withSsim`, SSIM of each frame `frames` yields (the others NaN), decoded from the stack
 * file `bytes` by the reader (so exactly as `expand` rebuilds it) and measured against the source frame.
 * Threads can share a series by sharing the frame counter behind `frames`.
 */
export function measureStackFile(
  bytes: Uint8Array,
  input: StackInput,
  frames: Iterable<number>,
  withSsim: boolean,
): { psnr: number[]; ssim: number[] } {
  const reader = openStack(bytes, 'stack');
  return measureFrames(input, (j) => reader.frame(j), withSsim, frames);
}

/**
 * Validate sizes and prepare the series. `transformed`: the frames' wavelet coefficients when already
 * computed ({@link transformFrames}, [channel][frame]).
 * @throws RangeError on inconsistent frames (callers name files first).
 */
export function prepareStack(
  input: StackInput,
  maxRank = MAX_STACK_RANK,
  transformed?: Float64Array[][],
): PreparedStack {
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
  frames.forEach((_, j) => {
    codedPlanesOf(input, j).forEach((p, c) => {
      coded[c].push(p);
    });
  });
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
  const toSource = (planes: Float64Array[]) => toSourceSamples(planes, channels, input.bitDepth);
  let analysis: StackAnalysis | undefined;
  const analyse = () => {
    analysis ??= analyseStack(coded, svd, width, height, Math.min(maxRank, frames.length), transformed);
    return analysis;
  };
  return { input, coded, svd, eigen, toSource, analysis: analyse };
}

/** A reader whose frames are source samples: one plane per source channel, rounded and clamped. */
export type StackReader = StackReaderOf<Float32Array[]>;

/**
 * Open a stack file held in memory; its frames come back as source samples.
 * @throws FormatError naming `file` for a damaged, truncated or inconsistent file.
 */
export function openStack(bytes: Uint8Array, file: string): StackReader {
  const planes = openStackPlanes(bytes, file);
  const { channels, bitDepth } = planes.header;
  return {
    header: planes.header,
    touched: planes.touched,
    verify: () => planes.verify(),
    frame: (j) => toSourceSamples(planes.frame(j), channels, bitDepth),
  };
}

/** Decode one frame of an in-memory stack file (the app's frame slider). @throws FormatError. */
export function decodeStackFrame(bytes: Uint8Array, j: number, file = 'stack'): Float32Array[] {
  return openStack(bytes, file).frame(j);
}
