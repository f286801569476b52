/** What the batch runner sends to a batch worker, and what comes back. */
import type { CompressOptions, CompressReport } from '../../contract';
import type { ThumbPair } from './thumbs';

interface BatchJob {
  input: string;
  output: string;
  options: CompressOptions;
  /** Replace an existing output (set by --force, or by --resume for an output with no matching record). */
  overwrite: boolean;
  expandCheck: boolean;
  /**
   * --resume found this output but no matching manifest row: keep it if its .rkf header's source SHA-256
   * equals the decoded input's, otherwise compress again (overwriting).
   */
  verifyExisting?: boolean;
  /**
   * Draw the report's thumbnail pair from memory when this file's PSNR is at most this bound (the PSNR of
   * the N-th worst file finished so far, or +∞ while fewer than N are done); absent: draw none.
   */
  thumbsAtOrBelowPsnr?: number;
}

export interface ExpandCheck {
  psnr: number;
  ssim?: number;
  ok: boolean;
  message?: string;
}

/** What the .rkf header of an output kept by `verifyExisting` says. */
export interface KeptOutput {
  sourceSha256: string;
  width: number;
  height: number;
  channels: number;
  bitDepth: number;
  bytes: number;
  rawBytes: number;
  inputBytes: number;
}

export interface BatchJobResult {
  /** Set when an existing output was verified by its header and kept (then `report` is absent). */
  kept?: KeptOutput;
  report?: CompressReport;
  fileSha256: string;
  check?: ExpandCheck;
  timeMs: number;
  /** Thumbnail pair drawn from memory (see BatchJob.thumbsAtOrBelowPsnr). */
  thumbs?: ThumbPair;
}

/** Report thumbnails of one finished file that had none from its compress job (a kept output, say). */
export interface ThumbJob {
  kind: 'thumbs';
  path: string;
  inputAbs: string;
  outputAbs: string;
}

/** `batch --total`: measure one file's rate–quality curve (survey.ts). */
export interface SurveyJob {
  kind: 'survey';
  input: string;
  options: CompressOptions;
}

/** What a survey job measured. `points` are whole-file bytes against PSNR. */
export interface SurveyJobResult {
  method: string;
  width: number;
  height: number;
  channels: number;
  bitDepth: number;
  rawBytes: number;
  points: { bytes: number; psnr: number }[];
  timeMs: number;
}

/** Everything a batch worker takes: a file to compress or survey, or a finished file to draw for the report. */
export type BatchWork = BatchJob | ThumbJob | SurveyJob;
export type BatchWorkResult = BatchJobResult | ThumbPair | SurveyJobResult;

export const isThumbJob = (w: BatchWork): w is ThumbJob => (w as ThumbJob).kind === 'thumbs';
export const isSurveyJob = (w: BatchWork): w is SurveyJob => (w as SurveyJob).kind === 'survey';
