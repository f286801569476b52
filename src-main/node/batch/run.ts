/**
 * Run a batch: plan, resume, dispatch to the worker pool, journal every finished file, and write the
 * manifest, CSV and HTML report at the end. Used by `rankfold batch` and by any other transport.
 */
import { mkdir, readdir, stat, unlink } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { basename, dirname, join, resolve } from 'node:path';
import sharp from 'sharp';
import {
  type BatchEvent,
  type BatchRow,
  type BatchSummary,
  type CompressOptions,
  type ErrorPayload,
  MANIFEST_VERSION,
  type Shard,
  shardText,
  toErrorPayload,
  UsageError,
} from '../../contract';
import { TEMP_PREFIX, writeFileAtomic } from '../io/atomic';
import { hashFile } from './codec';
import type { BatchJobResult, BatchWork, BatchWorkResult } from './job';
import { acquireBatchLock, type BatchLock } from './lock';
import { ManifestJournal, manifestBase, readManifest, rowsToCsv, rowTotals, writeManifest } from './manifest';
import { checkFolders, isInside, type PlannedFile, planBatch, type SkippedEntry, specialKind } from './plan';
import { WorkerPool } from './pool';
import { WorstSoFar, worstRows, writeReport } from './report';
import { makeThumbnails, type ThumbPair } from './thumbs';

/** Default per-file limit: 30 minutes, far above a 300-megapixel scan on one core. */
export const DEFAULT_TIMEOUT_MS = 30 * 60 * 1000;

export interface BatchRunOptions {
  inDir: string;
  outDir: string;
  compress: CompressOptions;
  /** Worker threads. Default: the number of cores. */
  jobs?: number;
  include?: string[];
  exclude?: string[];
  shard?: Shard;
  resume?: boolean;
  dryRun?: boolean;
  /** Overwrite existing outputs. */
  force?: boolean;
  expandCheck?: boolean;
  /** Per-file limit in ms; 0 = none. */
  timeoutMs?: number;
  /** Manifest path; default OUT_DIR/rankfold-manifest[-IofN].jsonl. The CSV sits beside it. */
  manifest?: string;
  /** HTML report path; default beside the manifest. */
  report?: string;
  /** Built worker file (dist/workers/batch.js). */
  workerFile: string | URL;
  /** Called for every event (start, each file, end). */
  onEvent?: (e: BatchEvent) => void;
  /** Called when a job reports progress, with bytes of input finished so far. */
  onProgress?: (p: {
    done: number;
    total: number;
    bytesDone: number;
    bytesTotal: number;
    failed: number;
  }) => void;
  /** Abort: queued files are not started, running ones are stopped; finished rows are kept. */
  signal?: AbortSignal;
}

export interface BatchResult {
  summary: BatchSummary;
  rows: BatchRow[];
  /** Non-fatal problems: folders that could not be listed, manifest/report write errors. */
  warnings: string[];
  /** Remarks that lose nothing, e.g. a stale lock of a dead run that was taken over. */
  notices: string[];
  interrupted: boolean;
}

/** Remove our own stale temp files for the given outputs (never another shard's). */
export async function sweepTemps(outputs: string[]): Promise<number> {
  const byDir = new Map<string, Set<string>>();
  for (const o of outputs) {
    const d = dirname(o);
    const set = byDir.get(d) ?? new Set<string>();
    set.add(basename(o));
    byDir.set(d, set);
  }
  let removed = 0;
  for (const [dir, names] of byDir) {
    let entries: string[];
    try {
      entries = await readdir(dir);
    } catch {
      continue;
    }
    for (const e of entries) {
      if (!e.startsWith(TEMP_PREFIX)) continue;
      // Temp names are `${TEMP_PREFIX}<12 hex>-<final name>`.
      const m = /^[0-9a-f]{12}-(.*)$/s.exec(e.slice(TEMP_PREFIX.length));
      if (!m || !names.has(m[1])) continue;
      try {
        await unlink(join(dir, e));
        removed++;
      } catch {}
    }
  }
  return removed;
}

function baseRow(f: PlannedFile, shard: string): BatchRow {
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
  return `${budget} tile=${c.tile}${c.page ? ` page=${c.page}` : ''}`;
}

function rowFromResult(f: PlannedFile, shard: string, r: BatchJobResult, settings: string): BatchRow {
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

/** Right before a file is handed to a worker: is it (still) a regular file? Narrows the window in which a
 *  file swapped for a FIFO after the walk could be opened. Undefined: go ahead. */
async function notRegularNow(f: PlannedFile): Promise<SkippedEntry | undefined> {
  try {
    const s = await stat(f.inputAbs);
    if (s.isFile()) return undefined;
    return {
      path: f.path,
      inputAbs: f.inputAbs,
      reason: `is ${specialKind(s)}, not a regular file (it changed during the batch); it was not opened`,
    };
  } catch {
    return undefined; // the compressor reports the problem for this file
  }
}

function failedRow(f: PlannedFile, shard: string, error: ErrorPayload, timeMs?: number): BatchRow {
  return { ...baseRow(f, shard), status: 'failed', error, inputBytes: f.size, timeMs };
}

async function existingSize(p: string): Promise<number | undefined> {
  try {
    const s = await stat(p);
    return s.isFile() ? s.size : undefined;
  } catch {
    return undefined;
  }
}

/** Files in the order they are handed to workers: largest first, ties by path. */
export function dispatchOrder(files: PlannedFile[]): PlannedFile[] {
  return files.slice().sort((a, b) => b.size - a.size || (a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
}

/** Run `n` async tasks over items with at most `limit` at once, in order of items. */
async function eachLimit<T>(items: T[], limit: number, fn: (t: T) => Promise<void>) {
  let i = 0;
  await Promise.all(
    Array.from({ length: Math.min(limit, items.length) }, async () => {
      while (i < items.length) await fn(items[i++]);
    }),
  );
}

export async function runBatch(o: BatchRunOptions): Promise<BatchResult> {
  const started = performance.now();
  const { inDir, outDir } = await checkFolders(o.inDir, o.outDir);
  const shard = o.shard ?? { index: 0, count: 1 };
  const shardLabel = shardText(shard);
  const plan = await planBatch(inDir, outDir, { include: o.include, exclude: o.exclude, shard });
  const warnings = plan.problems.map((p) => `${p.path}: ${p.message}`);
  const notices: string[] = [];
  const jobs = Math.max(1, Math.min(o.jobs ?? availableParallelism(), 256));
  // One job = one core: libvips' own thread pool is process-wide and shared by every worker, so batch
  // parallelism comes from --jobs alone and throughput scales with the job count (docs/cli.md, batch).
  sharp.concurrency(1);
  const base = manifestBase(shard.index, shard.count);
  const manifestPath = o.manifest ?? join(outDir, `${base}.jsonl`);
  const csvPath = manifestPath.replace(/\.jsonl?$/i, '') + '.csv';
  const reportPath = o.report ?? manifestPath.replace(/\.jsonl?$/i, '') + '.html';
  for (const [what, p] of [
    ['manifest', manifestPath],
    ['report', reportPath],
  ] as const)
    if (isInside(resolve(p), inDir))
      throw new UsageError(
        `the ${what} ${p} would be written inside the input folder ${inDir}; batch never writes there — choose another path`,
      );

  // One run per manifest (shards have their own manifests and may share OUT_DIR). Taken before --resume reads
  // the manifest and before stale temp files are swept, so a second run never touches the first run's files.
  let lock: BatchLock | undefined;
  if (!o.dryRun) {
    try {
      await mkdir(dirname(resolve(manifestPath)), { recursive: true });
    } catch {}
    try {
      lock = await acquireBatchLock(manifestPath, o.outDir);
      if (lock.notice) notices.push(lock.notice);
    } catch (err) {
      if (err instanceof UsageError) throw err;
      // A folder we cannot write to is reported once, by the manifest's own warning.
      const code = (err as NodeJS.ErrnoException).code ?? '';
      if (!['ENOENT', 'ENOTDIR', 'EACCES', 'EPERM', 'EROFS'].includes(code))
        warnings.push(
          `manifest ${manifestPath} cannot be locked (${(err as NodeJS.ErrnoException).code ?? (err as Error).message}); another run into the same folder would not be detected`,
        );
    }
  }
  try {
    return await runLocked();
  } finally {
    await lock?.release();
  }

  async function runLocked(): Promise<BatchResult> {
    // Resume: which outputs are already right?
    const previous = new Map<string, BatchRow>();
    if (o.resume) {
      try {
        for (const r of (await readManifest(manifestPath)).rows) previous.set(r.path, r);
      } catch (err) {
        warnings.push(
          `previous manifest ${manifestPath} cannot be read (${(err as Error).message}); every output is checked again`,
        );
      }
    }
    const kept = new Map<string, BatchRow>();
    const overwrite = new Set<string>();
    const verify = new Set<string>();
    const settings = settingsText(o.compress);
    if (o.resume) {
      await eachLimit(plan.files, jobs, async (f) => {
        const size = await existingSize(f.outputAbs);
        if (size === undefined) return;
        const prev = previous.get(f.path);
        if (
          prev &&
          (prev.status === 'ok' || prev.status === 'kept') &&
          prev.output === f.output &&
          prev.bytes === size &&
          prev.settings === settings &&
          prev.fileSha256
        ) {
          try {
            if ((await hashFile(f.inputAbs)) === prev.fileSha256) {
              kept.set(f.path, {
                ...prev,
                inputAbs: f.inputAbs,
                outputAbs: f.outputAbs,
                status: 'kept',
                shard: shardLabel,
              });
              return;
            }
          } catch {
            // Unreadable now: compress again, which reports the problem for this file.
          }
        }
        // No row (a kill between rename and journal, or a lost manifest): the worker checks the .rkf header.
        // A row that does not match (other settings, changed source): compress again.
        if (!prev || prev.status === 'failed') verify.add(f.path);
        else overwrite.add(f.path);
      });
    }
    const todo = plan.files.filter((f) => !kept.has(f.path));
    const total = plan.files.length + plan.skipped.length;
    const bytesTotal = todo.reduce((s, f) => s + f.size, 0);
    o.onEvent?.({ event: 'start', total, kept: kept.size, jobs, shard: shardLabel, inDir, outDir });

    const rows: BatchRow[] = [];
    let done = 0;
    let failed = 0;
    let bytesDone = 0;
    const emit = (row: BatchRow) => {
      done++;
      if (row.status === 'failed') failed++;
      o.onEvent?.({ event: 'file', done, total, ...row });
      o.onProgress?.({ done, total, bytesDone, bytesTotal, failed });
    };
    // Thumbnails drawn by the compress jobs, for files that may end among the report's worst.
    const worst = new WorstSoFar();
    const drawn = new Map<string, ThumbPair>();
    // Special files first: listed with the reason, never opened, not failures.
    for (const e of plan.skipped) {
      const row = skippedRow(e, shardLabel);
      rows.push(row);
      emit(row);
    }
    for (const f of plan.files) {
      const k = kept.get(f.path);
      if (k) {
        rows.push(k);
        worst.add(k);
        emit(k);
      }
    }

    if (o.dryRun) {
      for (const f of todo) {
        const row = baseRow(f, shardLabel);
        rows.push(row);
        emit(row);
      }
      return finish(false);
    }

    // Folders and the journal. A folder we cannot create is reported per file by the compressor.
    try {
      await mkdir(outDir, { recursive: true });
    } catch (err) {
      warnings.push(
        `output folder ${outDir} cannot be created (${(err as NodeJS.ErrnoException).code ?? (err as Error).message})`,
      );
    }
    await sweepTemps(plan.files.map((f) => f.outputAbs));
    const journal = new ManifestJournal(manifestPath);
    let journalOk = true;
    try {
      await journal.open(!o.resume);
    } catch (err) {
      journalOk = false;
      warnings.push(
        `manifest ${manifestPath} cannot be written (${(err as NodeJS.ErrnoException).code ?? (err as Error).message}); rows are only in the --json output`,
      );
    }
    let interrupted = false;
    let thumbs: Map<string, ThumbPair> | undefined;
    const pool = new WorkerPool<BatchWork, BatchWorkResult>(
      o.workerFile,
      Math.min(jobs, Math.max(1, todo.length)),
    );
    const onAbort = () => {
      interrupted = true;
      void pool.close();
    };
    if (o.signal?.aborted) onAbort();
    o.signal?.addEventListener('abort', onAbort, { once: true });
    try {
      // Largest files first (longest-processing-time order), so no worker idles at the end on one big scan.
      // Outputs do not depend on the order; the manifest is sorted by path at the end. Only `pool.size` files
      // are in flight at once, so the pool queue stays short however many files a shard holds.
      await eachLimit(dispatchOrder(todo), pool.size, async (f) => {
        if (interrupted) return;
        const changed = await notRegularNow(f);
        if (changed) {
          const row = skippedRow(changed, shardLabel);
          rows.push(row);
          if (journalOk) await journal.append(row);
          emit(row);
          return;
        }
        const outcome = await pool.run(
          {
            input: f.inputAbs,
            output: f.outputAbs,
            options: o.compress,
            overwrite: Boolean(o.force) || overwrite.has(f.path),
            verifyExisting: !o.force && verify.has(f.path),
            expandCheck: Boolean(o.expandCheck),
            thumbsAtOrBelowPsnr: worst.bound(),
          },
          { timeoutMs: o.timeoutMs ?? DEFAULT_TIMEOUT_MS, label: f.path },
        );
        if (!outcome.ok && outcome.error.name === 'CancelledError') {
          // Stopped by an interrupt: no row (it was not finished), and no temp file left behind.
          await sweepTemps([f.outputAbs]);
          return;
        }
        bytesDone += f.size;
        let row: BatchRow;
        if (outcome.ok) {
          const value = outcome.value as BatchJobResult;
          row = rowFromResult(f, shardLabel, value, settings);
          if (value.thumbs) drawn.set(f.path, value.thumbs);
        } else {
          // A stopped worker may have left its temp file behind.
          await sweepTemps([f.outputAbs]);
          row = failedRow(f, shardLabel, outcome.error);
        }
        rows.push(row);
        worst.add(row);
        for (const p of drawn.keys()) if (!worst.has(p)) drawn.delete(p);
        if (journalOk) await journal.append(row);
        emit(row);
      });
      // The report's thumbnails: most were drawn by the compress jobs; the rest (outputs kept by --resume,
      // a job whose drawing failed) on the workers while they are still up. After an interrupt the pool is
      // closed, and the report draws them itself.
      if (!interrupted) {
        const final = worstRows(rows);
        const late = await makeThumbnails(
          final.filter((r) => !drawn.has(r.path)),
          async (r) => {
            const t = await pool.run(
              { kind: 'thumbs', path: r.path, inputAbs: r.inputAbs, outputAbs: r.outputAbs },
              { timeoutMs: o.timeoutMs ?? DEFAULT_TIMEOUT_MS, label: r.path },
            );
            return t.ok ? (t.value as ThumbPair) : { note: `thumbnails unavailable (${t.error.message})` };
          },
        );
        thumbs = new Map(final.map((r) => [r.path, drawn.get(r.path) ?? late.get(r.path)!]));
      }
    } finally {
      o.signal?.removeEventListener('abort', onAbort);
      await pool.close();
      await journal.close();
    }
    if (journal.error)
      warnings.push(
        `manifest ${manifestPath}: ${journal.lost} row${journal.lost === 1 ? '' : 's'} could not be appended while the batch ran (${journal.error.message}); the journal was cut back to its last whole row`,
      );
    return finish(interrupted);

    async function finish(wasInterrupted: boolean): Promise<BatchResult> {
      const summary: BatchSummary = {
        total,
        ...rowTotals(rows),
        megapixels: rows.reduce(
          (s, r) => s + (r.status === 'ok' && r.width && r.height ? (r.width * r.height) / 1e6 : 0),
          0,
        ),
        elapsedMs: performance.now() - started,
        failures: rows
          .filter((r) => r.status === 'failed')
          .map((r) => r.path)
          .sort(),
      };
      if (!o.dryRun) {
        // Kept rows from an interrupted run are still true; unstarted files simply have no row yet.
        try {
          await writeManifest(manifestPath, rows);
          summary.manifest = manifestPath;
        } catch (err) {
          warnings.push(`manifest ${manifestPath} cannot be written (${(err as Error).message})`);
        }
        try {
          await writeFileAtomic(csvPath, rowsToCsv(rows), { force: true });
          summary.csv = csvPath;
        } catch (err) {
          warnings.push(`CSV ${csvPath} cannot be written (${(err as Error).message})`);
        }
        try {
          await writeReport(
            reportPath,
            rows,
            {
              title: `Rankfold batch of ${inDir}`,
              inDir,
              outDir,
              shards: [shardLabel],
              elapsedMs: summary.elapsedMs,
              warnings,
            },
            thumbs,
          );
          summary.report = reportPath;
        } catch (err) {
          warnings.push(`report ${reportPath} cannot be written (${toErrorPayload(err).message})`);
        }
      }
      o.onEvent?.({ event: 'end', summary });
      return { summary, rows, warnings, notices, interrupted: wasInterrupted };
    }
  }
}
