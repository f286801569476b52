/**
 * What the scan encoders (./encode for a scan in memory, ./tiled for large scans) take and report, and the
 * byte figure of a budget.
 */
import type { Budget } from '../../contract';
import type { ByteCompressor, EntropyId } from '../codec/entropy';
import type { RkfHeader } from '../codec/image-file';
import type { DecodedRkf } from './decode-image';
import type { PlaneFactors } from './factorise';
import type { SideRunner } from './side-jobs';
import type { LayerCandidate } from './two-layer';

export interface EncodeOptions {
  budget: Budget;
  tile: number | 'auto';
  entropy?: EntropyId;
  compressors?: ByteCompressor[];
  encoder?: string;
  onProgress?: (stage: string, fraction: number) => void;
  /** Throws (e.g. CancelledError) when the job should stop. */
  checkCancelled?: () => void;
  /** SHA-256 of the alpha plane's samples (16-bit big-endian), hashed by the caller; stored so expand can check it. */
  alphaSha256?: string;
  /** Clock in milliseconds (for timings); defaults to Date.now. */
  now?: () => number;
  /**
   * 'base' (default): the low-rank factors only. 'auto': under a byte budget (bytes, percent, bpp) on a scan of
   * at most RESIDUAL_MAX_PIXELS, also try a wavelet-coded residual layer and keep the split with the least
   * error (./two-layer). Rank and quality-floor budgets stay base-only.
   */
  layers?: 'base' | 'auto';
  /**
   * Whole-plane factors of the encoded planes (grey, or Y, Cb, Cr), e.g. from ./given-factors: with tile 0
   * the encode uses them instead of factoring again. Ranks beyond their components cannot be chosen.
   */
  factors?: PlaneFactors[];
  /**
   * A second thread for the parts of the encode that split without changing any result (./side-jobs): the
   * output is the same bit for bit with or without it. Default: everything on the calling thread.
   */
  side?: SideRunner;
  /**
   * The lossless file (./lossless-choice): 'always' writes it with no lossy search; 'auto' writes it where it
   * fits a byte budget, or is no larger than the lossy file meeting a quality floor. Default: never.
   */
  exact?: 'auto' | 'always';
}

/** What the layers of the written file cost and how the split was chosen. */
export interface LayerSummary {
  /** Bytes of the base layer's factor streams (PLNE payloads) and of the residual layer (RSDL payloads). */
  baseBytes: number;
  residualBytes: number;
  /** Residual step per coded plane, null for a plane without a residual. */
  residualSteps: Array<number | null>;
  /** The candidate kept ('lossless' for a lossless file) and every candidate tried (empty when the two-layer search did not run). */
  chosen: LayerCandidate['kind'] | 'lossless';
  candidates: LayerCandidate[];
  /** Real encodes of the residual layer in the search (each codes every plane once). */
  residualEncodes: number;
  /** Bytes of the exact planes (EXCT payloads) of a lossless file; absent otherwise. */
  losslessBytes?: number;
}

export interface PlaneRankSummary {
  channel: string;
  tile: number;
  ranks: Int32Array;
}

/** What both scan encoders report: the file, its ranks, its quality and error figures, and timings. */
export interface ScanEncodeFigures {
  bytes: Uint8Array;
  header: RkfHeader;
  ranks: PlaneRankSummary[];
  psnr: number;
  ssim: number;
  errors: { frobenius: number; frobeniusOptimal: number; spectralBound: number };
  factorMs: number;
  encodeMs: number;
  lossless: boolean;
}

export interface EncodeResult extends ScanEncodeFigures {
  decoded: DecodedRkf;
  layers: LayerSummary;
}

/** Resolve a budget to bytes when it is one; undefined for rank and quality floors. */
export function budgetBytes(
  b: Budget,
  img: { width: number; height: number; rawBytes: number },
): number | undefined {
  if (b.kind === 'bytes') return b.bytes;
  if (b.kind === 'percent') return Math.floor((img.rawBytes * b.percent) / 100);
  if (b.kind === 'bpp') return Math.floor((b.bpp * img.width * img.height) / 8);
  return undefined;
}
