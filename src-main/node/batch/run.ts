/**
 * Run a batch: plan, resume, dispatch to the worker pool, journal every finished file, and write the
 * manifest, CSV and HTML report at the end. Used by `rankfold batch` and by the app's Batch panel.
 *
 * The steps, in order: `startRun` (folders, plan, output paths), `lockManifest`, `resumeState` (resume.ts),
 * the rows that need no work, `compressFiles` (dispatch.ts: journal, pool, report thumbnails), `finishRun`
 * (summary, manifest, CSV, report). Its options and result are in run-options.ts.
 */
import { mkdir } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { type BatchRow, shardText, toErrorPayload, UsageError } from '../../contract';
import { withLibvipsThreads } from '../image/libvips-threads';
import { writeFileAtomic } from '../io/atomic';
import { collectionSettings, prepareCollection } from './collection';
import { compressFiles } from './dispatch';
import { acquireBatchLock, type BatchLock } from './lock';
import { manifestBase, rowsToCsv, writeManifest } from './manifest';
import { checkFolders, isInside, planBatch } from './plan';
import { writeReport } from './report';
import { type ResumeState, resumeState } from './resume';
import { baseRow, settingsText, skippedRow } from './rows';
import { type BatchResult, type BatchRunOptions, DEFAULT_TIMEOUT_MS, type Run } from './run-options';
import { batchFiles, batchSummary } from './summary';
import { Tally } from './tally';
import type { ThumbPair } from './thumbs';

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
  const run: Run = {
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
  if (isCollection(o)) run.settings = await collectionSettings(run);
  return run;
}

/** `--total`, `--survey` or `--plan`: the two-pass collection run (collection.ts). */
const isCollection = (o: BatchRunOptions) => Boolean(o.total || o.surveyOnly || o.planFile);

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
  // A collection's caps are planned for files without a standing row; an output with no row is made again.
  if (isCollection(o)) for (const p of resume.verify) resume.overwrite.add(p);
  if (isCollection(o)) resume.verify.clear();
  let todo = plan.files.filter((f) => !resume.kept.has(f.path));
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
  if (isCollection(o)) {
    const next = await prepareCollection(run, todo, tally);
    if (!next) return finishRun(run, tally.rows, false);
    todo = next.todo;
    run.allotter = next.allotter;
  }
  if (o.dryRun) {
    for (const f of todo) tally.emit(tally.add(baseRow(f, shardLabel)));
    return finishRun(run, tally.rows, false);
  }
  const { interrupted, thumbs } = await compressFiles(run, todo, resume, tally);
  return finishRun(run, tally.rows, interrupted, thumbs);
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
  if (!o.dryRun && !o.surveyOnly) {
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
        collection: run.collection,
      };
      await writeReport(files.report, rows, info, thumbs);
      summary.report = files.report;
    } catch (err) {
      warnings.push(`report ${files.report} cannot be written (${toErrorPayload(err).message})`);
    }
  }
  o.onEvent?.({ event: 'end', summary });
  return { summary, rows, warnings, notices: run.notices, interrupted, collection: run.collection };
}
