/**
 * The manifest row each entry of a batch gets: planned (dry run), kept or compressed (from a finished job),
 * failed, or skipped (not a regular file). Every row names the shard that wrote it.
 */
import {
  type BatchRow,
  type CompressOptions,
  type ErrorPayload,
  MANIFEST_VERSION,
  OPTIONS,
} from '../../contract';
import { isNotAnImage } from '../image/refusals';
import type { BatchJobResult } from './job';
import type { PlannedFile, SkippedEntry } from './plan';

/** The row of a planned file before it is compressed (the dry run's row). */
export function baseRow(f: PlannedFile, shard: string): BatchRow {
  return {
    v: MANIFEST_VERSION,
    path: f.path,
    output: f.output,
    inputAbs: f.inputAbs,
    outputAbs: f.outputAbs,
    status: 'planned',
    shard,
    at: new Date().toISOString(),
  };
}

/** The settings that shape an output, as text; --resume redoes a file whose row has other settings. */
export function settingsText(c: CompressOptions): string {
  const b = c.budget;
  const budget =
    b.kind === 'rank'
      ? `rank=${b.rank}`
      : b.kind === 'bytes'
        ? `bytes=${b.bytes}`
        : b.kind === 'percent'
          ? `percent=${b.percent}`
          : b.kind === 'bpp'
            ? `bpp=${b.bpp}`
            : b.kind === 'psnr'
              ? `min-psnr=${b.db}`
              : `min-ssim=${b.value}`;
  // `--lossless` without a budget stands in as the PSNR floor's top (cli/args/budget-options): say lossless,
  // so --resume tells it from a real `--min-psnr` run; `lossless: false` (never exact) is a setting of its own.
  const stand = b.kind === 'psnr' && b.db === OPTIONS.minPsnr.max;
  const exact = c.lossless === true ? (stand ? 'lossless' : `lossless ${budget}`) : undefined;
  const head = exact ?? (c.lossless === false ? `${budget} lossless=never` : budget);
  return `${head} tile=${c.tile}${c.page ? ` page=${c.page}` : ''}`;
}

/** The row of a finished job: kept by its .rkf header, or compressed (and failed when --expand-check failed). */
export function rowFromResult(f: PlannedFile, shard: string, r: BatchJobResult, settings: string): BatchRow {
  if (r.kept || !r.report) {
    const k = r.kept!;
    return {
      ...baseRow(f, shard),
      fileSha256: r.fileSha256,
      sourceSha256: k.sourceSha256,
      inputBytes: k.inputBytes,
      rawBytes: k.rawBytes,
      bytes: k.bytes,
      ratio: k.rawBytes / k.bytes,
      bpp: (8 * k.bytes) / (k.width * k.height),
      width: k.width,
      height: k.height,
      channels: k.channels,
      bitDepth: k.bitDepth,
      timeMs: r.timeMs,
      status: 'kept',
      // Accepted for this run's settings (the header does not record the budget).
      settings,
      note: 'kept: the .rkf header records the same source SHA-256 (no manifest row; PSNR/SSIM not re-measured)',
    };
  }
  const rep = r.report;
  const row: BatchRow = {
    settings,
    ...baseRow(f, shard),
    fileSha256: r.fileSha256,
    sourceSha256: rep.sourceSha256,
    inputBytes: rep.inputBytes,
    rawBytes: rep.rawBytes,
    bytes: rep.outputBytes,
    ratio: rep.ratio,
    bpp: rep.bpp,
    psnr: rep.psnr,
    ssim: rep.ssim,
    width: rep.width,
    height: rep.height,
    channels: rep.channels,
    bitDepth: rep.bitDepth,
    ranks: rep.ranks,
    timeMs: r.timeMs,
    status: 'ok',
  };
  if (r.check) {
    row.check = r.check;
    if (!r.check.ok) {
      row.status = 'failed';
      row.error = { name: 'CheckError', message: `${f.path}: --expand-check failed: ${r.check.message}` };
    }
  }
  return row;
}

/** A row for an entry that is not a regular file: listed, never opened, no output. */
export function skippedRow(e: SkippedEntry, shard: string): BatchRow {
  return {
    v: MANIFEST_VERSION,
    path: e.path,
    output: '',
    inputAbs: e.inputAbs,
    outputAbs: '',
    status: 'skipped',
    note: `${e.path} ${e.reason}`,
    shard,
    at: new Date().toISOString(),
  };
}

/** The row of a file whose job failed. */
export function failedRow(f: PlannedFile, shard: string, error: ErrorPayload, timeMs?: number): BatchRow {
  return { ...baseRow(f, shard), status: 'failed', error, inputBytes: f.size, timeMs };
}

/**
 * The row of a file whose job ended in an error: a file the image reader refused as not an image at all (a text
 * file, a GIF: refusal kind 'not-an-image', image/refusals.ts) is listed as skipped with the reason, which does
 * not change the exit code (issue #14); any other error fails it.
 */
export function outcomeRow(f: PlannedFile, shard: string, error: ErrorPayload): BatchRow {
  if (!isNotAnImage(error)) return failedRow(f, shard, error);
  return { ...baseRow(f, shard), status: 'skipped', note: error.message, inputBytes: f.size };
}
