/** Requests and results of stack mode (`compress --stack`, `expand --frame`), shared by CLI, IPC and HTTP. */

import { checkBudget } from './budget';
import type { Budget } from './compress';
import { checkOptional, OPTIONS } from './options';
import { invalidParameterError, is } from './validate';

export interface StackCompressOptions {
  /**
   * Budget for the whole series (same kinds as `compress`): rank = eigen-frames per channel;
   * bytes/percent/bpp = the whole file; psnr/ssim = the worst frame must meet it.
   */
  budget?: Budget;
  /** Extra per-frame floor: the worst frame's PSNR must be at least this (dB). Combines with `budget`. */
  minPsnr?: number;
  /** Extra per-frame floor on SSIM (Wang et al. 2004). */
  minSsim?: number;
  /** Glob on file names when the input is a folder (picomatch syntax), e.g. `plate-*.tif`. */
  frames?: string;
  /** Code per-frame residuals where they pay. Default true. */
  residuals?: boolean;
  force?: boolean;
  pixelLimit?: number;
}

interface StackFrameReport {
  index: number;
  /** File name, or `name.tif#page` for a page of a multi-page TIFF. */
  name: string;
  sourceSha256: string;
  psnr: number;
  ssim: number;
  /** True when this frame carries its own coded residual. */
  residual: boolean;
}

export interface StackSpectrum {
  /** 'gray', or 'Y', 'Cb', 'Cr' for colour (JFIF full-range YCbCr). */
  channel: string;
  /** Frame-mode singular values after removing the mean frame and per-frame offsets (sample scale). */
  sigma: number[];
  /** Cumulative fraction of that energy carried by the first 1, 2, … eigen-frames. */
  cumulativeEnergy: number[];
  /** Eigen-frames needed to carry 90%, 99% and 99.9% of it. */
  eigenFramesFor: { '90%': number; '99%': number; '99.9%': number };
  /** Eigen-frames stored for this channel. */
  stored: number;
}

export interface StackReport {
  input: string;
  output: string;
  layout: 'stack';
  frames: number;
  width: number;
  height: number;
  channels: 1 | 3;
  bitDepth: 8 | 16;
  rawBytes: number;
  inputBytes: number;
  outputBytes: number;
  ratio: number;
  /** 8 · outputBytes / (width · height · frames). */
  bpp: number;
  /** Quantiser step Δ on the sample scale. */
  step: number;
  /** Bytes by role. `basis` = eigen-frames + mean frame; `coefficients` = per-frame weights and offsets. */
  bytes: {
    basis: number;
    mean: number;
    eigenFrames: number;
    coefficients: number;
    residuals: number;
    overhead: number;
  };
  spectrum: StackSpectrum[];
  psnr: { worst: number; mean: number; worstFrame: number };
  /** NaN (null in JSON) when frames are smaller than the 11×11 SSIM window. */
  ssim: { worst: number; mean: number; worstFrame: number };
  perFrame: StackFrameReport[];
  timings: { decodeMs: number; factorMs: number; encodeMs: number };
}

export interface StackExpandReport {
  input: string;
  frames: number[];
  outputs: string[];
  format: 'png' | 'tiff';
  width: number;
  height: number;
  channels: 1 | 3;
  bitDepth: 8 | 16;
  /** Per written frame: its source name and the SHA-256 of its source samples as stored. */
  sources: Array<{ index: number; name?: string; sourceSha256?: string }>;
}

/**
 * Validate stack options (from the CLI, IPC or HTTP): a budget (rank = eigen-frames, 0–64) or a per-frame
 * floor or both, with the ranges of ./options. @throws UsageError in the common format.
 */
export function checkStackOptions(o: unknown): StackCompressOptions {
  if (!is.plainObject(o)) throw invalidParameterError('stack options', 'an object', o);
  const v = o as StackCompressOptions;
  if (v.budget !== undefined) checkBudget(v.budget, OPTIONS.stackRank);
  checkOptional(OPTIONS.minPsnr, v.minPsnr);
  checkOptional(OPTIONS.minSsim, v.minSsim);
  checkOptional(OPTIONS.pixelLimit, v.pixelLimit);
  if (v.frames !== undefined && !(is.string(v.frames) && v.frames.length > 0 && v.frames.length < 1024))
    throw invalidParameterError('frames', 'a non-empty glob of at most 1023 characters', v.frames);
  if (v.budget === undefined && v.minPsnr === undefined && v.minSsim === undefined)
    throw invalidParameterError(
      'budget',
      'a budget (rank, bytes, percent, bpp, psnr or ssim) or a per-frame floor',
      v.budget,
    );
  return v;
}
