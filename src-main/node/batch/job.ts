/** What the batch runner sends to a batch worker, and what comes back. */
import type { CompressOptions, CompressReport } from '../../contract';

export interface BatchJob {
  input: string;
  output: string;
  options: CompressOptions;
  /** Replace an existing output (set by --force, or by --resume for an output with no matching record). */
  overwrite: boolean;
  expandCheck: boolean;
}

export interface ExpandCheck {
  psnr: number;
  ssim?: number;
  ok: boolean;
  message?: string;
}

export interface BatchJobResult {
  report: CompressReport;
  fileSha256: string;
  check?: ExpandCheck;
  timeMs: number;
}
