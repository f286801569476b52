/**
 * The compress step of a batch run: the planned files go to the worker pool, largest first, each finished row
 * is journalled as it arrives, and the report's thumbnails that the jobs did not draw are drawn at the end.
 */
import { mkdir } from 'node:fs/promises';
import { type BatchRow, type CompressOptions, toErrorPayload } from '../../contract';
import { sweepTemps } from '../io/atomic';
import { type Allotment, LiveAllotter } from './allot';
import type { BatchJobResult, BatchWork, BatchWorkResult } from './job';
import { ManifestJournal } from './manifest';
import { dispatchOrder, notRegularNow, type PlannedFile } from './plan';
import { eachLimit, WorkerPool } from './pool';
import { worstThumbnails } from './report';
import type { ResumeState } from './resume';
import { failedRow, outcomeRow, rowFromResult, skippedRow } from './rows';
import type { Run } from './run-options';
import { spendSpare } from './spare';
import type { Tally } from './tally';
import type { ThumbPair } from './thumbs';

/**
 * Compress `todo` on the worker pool, journalling each row as it arrives, then draw the report's thumbnails
 * that the jobs did not. An abort closes the pool: queued files get no row.
 */
export async function compressFiles(
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
    // One machine's --total: the bytes left under the total go to the worst files (spare.ts).
    if (!interrupted && run.allotter instanceof LiveAllotter && run.collection)
      run.collection.spare = await spendSpare(run, {
        pool,
        tally,
        append: async (row) => journal?.append(row),
        replaced: (path) => drawn.delete(path),
        stopped: () => interrupted,
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
  // A collection run: this file's byte cap, planned as it starts (allot.ts).
  let cap: Allotment | undefined;
  try {
    cap = run.allotter?.take(f.path);
  } catch (err) {
    return on.tally.add(failedRow(f, shardLabel, toErrorPayload(err)));
  }
  o.onFileStart?.(f.path);
  const options: CompressOptions = cap
    ? { ...o.compress, budget: { kind: 'bytes', bytes: cap.bytes } }
    : o.compress;
  const outcome = await on.pool.run(
    {
      input: f.inputAbs,
      output: f.outputAbs,
      options,
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
    row = rowFromResult(f, shardLabel, value, cap ? `${run.settings} bytes=${cap.bytes}` : run.settings);
    if (value.thumbs) on.drawn.set(f.path, value.thumbs);
  } else {
    // A stopped worker may have left its temp file behind.
    await sweepTemps([f.outputAbs]);
    row = outcomeRow(f, shardLabel, outcome.error);
  }
  if (cap && run.collection) {
    row.plan = { ...cap, total: run.collection.total };
    run.allotter?.settle(f.path, cap.bytes, row.status === 'ok' ? (row.bytes ?? 0) : 0);
  }
  on.tally.add(row);
  for (const p of on.drawn.keys()) if (!on.tally.worst.has(p)) on.drawn.delete(p);
  return row;
}
