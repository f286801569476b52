/**
 * `rankfold batch`: the manifest row, the per-file events and the shard selector, shared by the CLI, the
 * batch runner, IPC and HTTP. See docs/cli.md and docs/scale.md.
 */

import type { CompressReport } from './compress';
import type { ErrorPayload } from './errors';
import { UsageError } from './errors';

/** Version of the manifest row layout. Bumped when a field changes meaning. */
export const MANIFEST_VERSION = 1;

/**
 * What happened to one input.
 * - `ok`: written (or re-written) in this run;
 * - `kept`: `--resume` found an output whose recorded source hash matches, and left it alone;
 * - `failed`: the file could not be compressed; `error` says why;
 * - `planned`: `--dry-run` only;
 * - `skipped`: not a regular file (a FIFO, a device, a socket, a symbolic link to one of those or to a
 *   folder, a broken or looping link); never opened, `note` says what it is. Not a failure.
 */
type BatchStatus = 'ok' | 'kept' | 'failed' | 'planned' | 'skipped';

/** One line of the manifest (JSON lines) and one row of the CSV. */
export interface BatchRow {
  v: number;
  /** Input path relative to IN_DIR, '/'-separated, Unicode NFC. The key of the row. */
  path: string;
  /** Output path relative to OUT_DIR, '/'-separated. */
  output: string;
  /** Absolute input and output paths on the machine that ran the shard (for thumbnails). */
  inputAbs: string;
  outputAbs: string;
  /** SHA-256 (hex) of the input file's bytes. `--resume` compares it. */
  fileSha256?: string;
  /** SHA-256 (hex) of the decoded samples, as the .rkf header records it. */
  sourceSha256?: string;
  inputBytes?: number;
  rawBytes?: number;
  /** Output file size in bytes. */
  bytes?: number;
  ratio?: number;
  bpp?: number;
  psnr?: number;
  ssim?: number;
  width?: number;
  height?: number;
  channels?: number;
  bitDepth?: number;
  ranks?: CompressReport['ranks'];
  /** Wall time for this file in the worker, milliseconds. */
  timeMs?: number;
  status: BatchStatus;
  /** Budget and tile that made the output, e.g. `min-psnr=40 tile=auto`. */
  settings?: string;
  /** A remark on the status, e.g. how a kept output was verified. */
  note?: string;
  error?: ErrorPayload;
  /** `--expand-check`: metrics measured again on the decoded output. */
  check?: { psnr: number; ssim?: number; ok: boolean; message?: string };
  /**
   * `--total` (issue #13): the bytes the plan allotted this file (a hard cap), the PSNR the survey predicted
   * at that size, the plan's floor when the file started, and the total (bytes) the run is held to.
   */
  plan?: { bytes: number; psnr: number; floor: number; total: number };
  /** Shard that produced the row, `I/N` (0-based), or `0/1` for an unsharded run. */
  shard: string;
  /** ISO-8601 time the row was written. */
  at: string;
}

/** One line of `--json` output. */
export type BatchEvent =
  | {
      event: 'start';
      total: number;
      kept: number;
      jobs: number;
      shard: string;
      inDir: string;
      outDir: string;
    }
  | ({ event: 'file'; done: number; total: number } & BatchRow)
  | { event: 'end'; summary: BatchSummary };

export interface BatchSummary {
  total: number;
  ok: number;
  kept: number;
  failed: number;
  planned: number;
  /** Entries that are not regular files (see `BatchStatus`), listed but never opened. */
  skipped: number;
  inputBytes: number;
  outputBytes: number;
  megapixels: number;
  elapsedMs: number;
  manifest?: string;
  csv?: string;
  report?: string;
  /** Relative paths of the failed files. */
  failures: string[];
}

/** A deterministic slice of the inputs: index in 0…count−1. */
export interface Shard {
  index: number;
  count: number;
}

/** Largest shard count accepted (a sanity bound, not a technical one). */
const MAX_SHARDS = 100_000;

/**
 * Parse `--shard I/N`: I counts from 0 (as a Kubernetes completion index does) and is below N.
 * @example parseShardText('2/8') // { index: 2, count: 8 }
 * @throws UsageError naming the text and the valid range.
 */
export function parseShardText(text: string): Shard {
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  if (!m) throw new UsageError(`Expected I/N such as 0/4 for shard but received ${JSON.stringify(text)}`);
  const index = Number(m[1]);
  const count = Number(m[2]);
  if (!(count >= 1 && count <= MAX_SHARDS))
    throw new UsageError(
      `Expected a shard count N between 1 and ${MAX_SHARDS} but received ${JSON.stringify(text)}`,
    );
  if (index >= count)
    throw new UsageError(
      `Expected a shard index between 0 and ${count - 1} for shard but received ${JSON.stringify(text)} (shards count from 0)`,
    );
  return { index, count };
}

/** `I/N` text of a shard. */
export function shardText(s: Shard): string {
  return `${s.index}/${s.count}`;
}
