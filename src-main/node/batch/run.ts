/**
 * Run a batch: plan, resume, dispatch to the worker pool, journal every finished file, and write the
 * manifest, CSV and HTML report at the end. Used by `rankfold batch` and by the app's Batch panel.
 *
 * The steps, in order: `startRun` (folders, plan, output paths), `lockManifest`, `resumeState` (resume.ts),
 * the rows that need no work, `compressFiles` (journal, pool, dispatch, report thumbnails), `finishRun`
 * (summary, manifest, CSV, report).
 */
import { mkdir } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import {
  type BatchEvent,
  type BatchRow,
  type BatchSummary,
  type CompressOptions,
  type Shard,
  shardText,
  toErrorPayload,
  UsageError,
} from '../../contract';
import { withLibvipsThreads } from '../image/libvips-threads';
import { sweepTemps, writeFileAtomic } from '../io/atomic';
import type { BatchJobResult, BatchWork, BatchWorkResult } from './job';
import { acquireBatchLock, type BatchLock } from './lock';
import { ManifestJournal, manifestBase, rowsToCsv, writeManifest } from './manifest';
import {
  checkFolders,
  dispatchOrder,
  isInside,
  notRegularNow,
  type Plan,
  type PlannedFile,
  planBatch,
} from './plan';
import { eachLimit, WorkerPool } from './pool';
import { worstThumbnails, writeReport } from './report';
import { type ResumeState, resumeState } from './resume';
import { baseRow, failedRow, rowFromResult, settingsText, skippedRow } from './rows';
import { type BatchFiles, batchFiles, batchSummary } from './summary';
import { type BatchCounts, Tally } from './tally';
import type { ThumbPair } from './thumbs';

/** Default per-file limit: 30 minutes, far above a 300-megapixel scan on one core. */
export const DEFAULT_TIMEOUT_MS = 30 * 60 * 1000;

export interface BatchRunOptions {
  inDir: string;
  outDir: string;
  compress: CompressOptions;
  /** Worker threads. Default: the number of cores. */
  jobs?: number;
  /**
   * libvips threads while the run lasts. libvips' pool is process-wide and shared by every worker, so with 1
   * batch parallelism comes from `jobs` alone and throughput scales with the job count (docs/cli.md, batch).
   * The setting the process had comes back when the run returns. Default: leave it as it is.
   */
  libvipsThreads?: number;
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
  onProgress?: (p: BatchCounts) => void;
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

/** What every step of one run reads; `warnings` and `notices` collect as it goes. */
interface Run {
  o: BatchRunOptions;
  inDir: string;
  outDir: string;
  shardLabel: string;
  plan: Plan;
  jobs: number;
  files: BatchFiles;
  settings: string;
  timeoutMs: number;
  warnings: string[];
  notices: string[];
  started: number;
}

export async function runBatch(o: BatchRunOptions): Promise<BatchResult> {
  const run = await startRun(o);
  // One run per manifest (shards have their own manifests and may share OUT_DIR). Taken before --resume reads
  // the manifest and before stale temp files are swept, so a second run never touches the first run's files.
  const lock = o.dryRun ? undefined : await lockManifest(run);
  try {
    return await withLibvipsThreads(o.libvipsThreads, () => runLocked(run));
  } finally {
    await lock?.release();
  }
}

/** Check the folders, plan the files, and place the manifest, CSV and report (never inside the input). */
async function startRun(o: BatchRunOptions): Promise<Run> {
  const started = performance.now();
  const { inDir, outDir } = await checkFolders(o.inDir, o.outDir);
  const shard = o.shard ?? { index: 0, count: 1 };
  const plan = await planBatch(inDir, outDir, { include: o.include, exclude: o.exclude, shard });
  const files = batchFiles(
    o.manifest ?? join(outDir, `${manifestBase(shard.index, shard.count)}.jsonl`),
    o.report,
  );
  for (const [what, p] of [
    ['manifest', files.manifest],
    ['report', files.report],
  ] as const)
    if (isInside(resolve(p), inDir))
      throw new UsageError(
        `the ${what} ${p} would be written inside the input folder ${inDir}; batch never writes there — choose another path`,
      );
  return {
    o,
    inDir,
    outDir,
    shardLabel: shardText(shard),
    plan,
    jobs: Math.max(1, Math.min(o.jobs ?? availableParallelism(), 256)),
    files,
    settings: settingsText(o.compress),
    timeoutMs: o.timeoutMs ?? DEFAULT_TIMEOUT_MS,
    warnings: plan.problems.map((p) => `${p.path}: ${p.message}`),
    notices: [],
    started,
  };
}

/** Take the manifest's lock. A folder that cannot be written is left to the manifest's own warning. */
async function lockManifest(run: Run): Promise<BatchLock | undefined> {
  const manifest = run.files.manifest;
  try {
    await mkdir(dirname(resolve(manifest)), { recursive: true });
  } catch {}
  try {
    const lock = await acquireBatchLock(manifest, run.o.outDir);
    if (lock.notice) run.notices.push(lock.notice);
    return lock;
  } catch (err) {
    if (err instanceof UsageError) throw err;
    const code = (err as NodeJS.ErrnoException).code ?? '';
    if (!['ENOENT', 'ENOTDIR', 'EACCES', 'EPERM', 'EROFS'].includes(code))
      run.warnings.push(
        `manifest ${manifest} cannot be locked (${(err as NodeJS.ErrnoException).code ?? (err as Error).message}); another run into the same folder would not be detected`,
      );
    return undefined;
  }
}

async function runLocked(run: Run): Promise<BatchResult> {
  const { o, plan } = run;
  const resume: ResumeState = o.resume
    ? await resumeState(plan.files, { ...run, manifest: run.files.manifest })
    : { kept: new Map(), overwrite: new Set(), verify: new Set() };
  const todo = plan.files.filter((f) => !resume.kept.has(f.path));
  const tally = new Tally(
    o,
    plan.files.length + plan.skipped.length,
    todo.reduce((s, f) => s + f.size, 0),
  );
  const { jobs, shardLabel, inDir, outDir } = run;
  o.onEvent?.({
    event: 'start',
    total: tally.total,
    kept: resume.kept.size,
    jobs,
    shard: shardLabel,
    inDir,
    outDir,
  });
  // Special files first: listed with the reason, never opened, not failures.
  for (const e of plan.skipped) tally.emit(tally.add(skippedRow(e, shardLabel)));
  for (const f of plan.files) {
    const k = resume.kept.get(f.path);
    if (k) tally.emit(tally.add(k));
  }
  if (o.dryRun) {
    for (const f of todo) tally.emit(tally.add(baseRow(f, shardLabel)));
    return finishRun(run, tally.rows, false);
  }
  const { interrupted, thumbs } = await compressFiles(run, todo, resume, tally);
  return finishRun(run, tally.rows, interrupted, thumbs);
}

/**
 * Compress `todo` on the worker pool, journalling each row as it arrives, then draw the report's thumbnails
 * that the jobs did not. An abort closes the pool: queued files get no row.
 */
async function compressFiles(
  run: Run,
  todo: PlannedFile[],
  resume: ResumeState,
  tally: Tally,
): Promise<{ interrupted: boolean; thumbs?: Map<string, ThumbPair> }> {
  const { o, outDir } = run;
  // Folders and the journal. A folder we cannot create is reported per file by the compressor.
  try {
    await mkdir(outDir, { recursive: true });
  } catch (err) {
    run.warnings.push(
      `output folder ${outDir} cannot be created (${(err as NodeJS.ErrnoException).code ?? (err as Error).message})`,
    );
  }
  await sweepTemps(run.plan.files.map((f) => f.outputAbs));
  const journal = await openJournal(run);
  const record = async (row: BatchRow) => {
    await journal?.append(row);
    tally.emit(row);
  };
  let interrupted = false;
  let thumbs: Map<string, ThumbPair> | undefined;
  const pool: BatchPool = new WorkerPool(o.workerFile, Math.min(run.jobs, Math.max(1, todo.length)));
  const onAbort = () => {
    interrupted = true;
    void pool.close();
  };
  if (o.signal?.aborted) onAbort();
  o.signal?.addEventListener('abort', onAbort, { once: true });
  // Thumbnails drawn by the compress jobs, for files that may end among the report's worst.
  const drawn = new Map<string, ThumbPair>();
  try {
    // Largest files first (longest-processing-time order), so no worker idles at the end on one big scan.
    // Outputs do not depend on the order; the manifest is sorted by path at the end. Only `pool.size` files
    // are in flight at once, so the pool queue stays short however many files a shard holds.
    await eachLimit(dispatchOrder(todo), pool.size, async (f) => {
      if (interrupted) return;
      const row = await compressOne(run, f, { pool, resume, tally, drawn });
      if (row) await record(row);
    });
    // After an interrupt the pool is closed, and the report draws the thumbnails itself.
    if (!interrupted)
      // The rest (outputs kept by --resume, a job whose drawing failed) on the workers while they are still up.
      thumbs = await worstThumbnails(tally.rows, drawn, async (r) => {
        const t = await pool.run(
          { kind: 'thumbs', path: r.path, inputAbs: r.inputAbs, outputAbs: r.outputAbs },
          { timeoutMs: run.timeoutMs, label: r.path },
        );
        return t.ok ? (t.value as ThumbPair) : { note: `thumbnails unavailable (${t.error.message})` };
      });
  } finally {
    o.signal?.removeEventListener('abort', onAbort);
    await pool.close();
    await journal?.close();
  }
  if (journal?.error)
    run.warnings.push(
      `manifest ${run.files.manifest}: ${journal.lost} row${journal.lost === 1 ? '' : 's'} could not be appended while the batch ran (${journal.error.message}); the journal was cut back to its last whole row`,
    );
  return { interrupted, thumbs };
}

type BatchPool = WorkerPool<BatchWork, BatchWorkResult>;

/** The journal rows are appended to as files finish; undefined (and a warning) when it cannot be opened. */
async function openJournal(run: Run): Promise<ManifestJournal | undefined> {
  const journal = new ManifestJournal(run.files.manifest);
  try {
    await journal.open(!run.o.resume);
    return journal;
  } catch (err) {
    run.warnings.push(
      `manifest ${run.files.manifest} cannot be written (${(err as NodeJS.ErrnoException).code ?? (err as Error).message}); rows are only in the --json output`,
    );
    return undefined;
  }
}

/**
 * One file on the pool: its row (added to the tally), or undefined when an interrupt stopped it (no row, as it
 * did not finish). A file that is no longer a regular file is skipped without being opened.
 */
async function compressOne(
  run: Run,
  f: PlannedFile,
  on: { pool: BatchPool; resume: ResumeState; tally: Tally; drawn: Map<string, ThumbPair> },
): Promise<BatchRow | undefined> {
  const { o, shardLabel } = run;
  const changed = await notRegularNow(f);
  if (changed) return on.tally.add(skippedRow(changed, shardLabel));
  const outcome = await on.pool.run(
    {
      input: f.inputAbs,
      output: f.outputAbs,
      options: o.compress,
      overwrite: Boolean(o.force) || on.resume.overwrite.has(f.path),
      verifyExisting: !o.force && on.resume.verify.has(f.path),
      expandCheck: Boolean(o.expandCheck),
      thumbsAtOrBelowPsnr: on.tally.worst.bound(),
    },
    { timeoutMs: run.timeoutMs, label: f.path },
  );
  if (!outcome.ok && outcome.error.name === 'CancelledError') {
    // Stopped by an interrupt: no row (it was not finished), and no temp file left behind.
    await sweepTemps([f.outputAbs]);
    return undefined;
  }
  on.tally.bytesDone += f.size;
  let row: BatchRow;
  if (outcome.ok) {
    const value = outcome.value as BatchJobResult;
    row = rowFromResult(f, shardLabel, value, run.settings);
    if (value.thumbs) on.drawn.set(f.path, value.thumbs);
  } else {
    // A stopped worker may have left its temp file behind.
    await sweepTemps([f.outputAbs]);
    row = failedRow(f, shardLabel, outcome.error);
  }
  on.tally.add(row);
  for (const p of on.drawn.keys()) if (!on.tally.worst.has(p)) on.drawn.delete(p);
  return row;
}

/** The summary, then the manifest, CSV and report (each failure is a warning), then the end event. */
async function finishRun(
  run: Run,
  rows: BatchRow[],
  interrupted: boolean,
  thumbs?: Map<string, ThumbPair>,
): Promise<BatchResult> {
  const { o, files, warnings, inDir, outDir } = run;
  const summary = batchSummary(
    rows,
    run.plan.files.length + run.plan.skipped.length,
    performance.now() - run.started,
  );
  if (!o.dryRun) {
    // Kept rows from an interrupted run are still true; unstarted files simply have no row yet.
    try {
      await writeManifest(files.manifest, rows);
      summary.manifest = files.manifest;
    } catch (err) {
      warnings.push(`manifest ${files.manifest} cannot be written (${(err as Error).message})`);
    }
    try {
      await writeFileAtomic(files.csv, rowsToCsv(rows), { force: true });
      summary.csv = files.csv;
    } catch (err) {
      warnings.push(`CSV ${files.csv} cannot be written (${(err as Error).message})`);
    }
    try {
      const info = {
        title: `Rankfold batch of ${inDir}`,
        inDir,
        outDir,
        shards: [run.shardLabel],
        elapsedMs: summary.elapsedMs,
        warnings,
      };
      await writeReport(files.report, rows, info, thumbs);
      summary.report = files.report;
    } catch (err) {
      warnings.push(`report ${files.report} cannot be written (${toErrorPayload(err).message})`);
    }
  }
  o.onEvent?.({ event: 'end', summary });
  return { summary, rows, warnings, notices: run.notices, interrupted };
}
