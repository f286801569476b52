/**
 * Adapter from the app's Batch panel to the batch runner (src-main/node/batch/run.ts), the same one
 * `rankfold batch` uses: same worker pool, manifest, CSV and HTML report. Runs on the main thread
 * only as orchestration; every file is compressed in the runner's worker threads.
 */
import { availableParallelism } from 'node:os';
import { join } from 'node:path';
import { adviceOf, type BatchFileStatus, type BatchRequest, type ErrorPayload } from '../../contract';
import { runBatch } from '../batch/run';

export interface BatchProgress {
  stage: string;
  done: number;
  total: number;
  file?: string;
  message?: string;
}

const STATE: Record<string, BatchFileStatus['state']> = {
  ok: 'done',
  kept: 'skipped',
  failed: 'failed',
  planned: 'queued',
  skipped: 'skipped',
};

export async function runBatchJob(
  req: BatchRequest,
  signal: AbortSignal,
  progress: (e: BatchProgress) => void,
  workersDir: string,
): Promise<{ files: BatchFileStatus[]; reportPath?: string; cancelled: boolean }> {
  const count = { done: 0, total: 0 };
  const r = await runBatch({
    inDir: req.input,
    outDir: req.output,
    compress: { budget: req.budget, tile: req.tile },
    force: req.force,
    total: req.total,
    dryRun: req.total ? req.dryRun : undefined,
    jobs: Math.max(1, Math.min(2, availableParallelism() - 1)),
    libvipsThreads: 1,
    workerFile: join(workersDir, 'batch.js'),
    signal,
    // Rows appear as files start (issue #14), and the survey and plan say what they do.
    onFileStart: (file) => progress({ stage: 'running', done: count.done, total: count.total, file }),
    onSurvey: (done, total, file) =>
      progress({
        stage: 'planning',
        done,
        total,
        message: `measured scan ${done} of ${total}${file ? ` (${file.path})` : ''} to plan the total`,
      }),
    onNote: (message) => progress({ stage: 'planning', done: count.done, total: count.total, message }),
    onEvent: (e) => {
      if (e.event === 'start') count.total = e.total;
      if (e.event === 'file') count.done = e.done;
      if (e.event === 'start') progress({ stage: 'started', done: 0, total: e.total });
      else if (e.event === 'file')
        progress({
          stage: STATE[e.status] ?? e.status,
          done: e.done,
          total: e.total,
          file: e.path,
          message:
            appMessage(e.error) ??
            (e.status === 'skipped' ? e.note : undefined) ??
            (e.psnr !== undefined ? `${e.bytes} bytes, PSNR ${e.psnr.toFixed(2)} dB` : undefined),
        });
    },
  });
  const files: BatchFileStatus[] = r.rows.map((row) => ({
    file: row.path,
    state: STATE[row.status] ?? 'failed',
    message: appMessage(row.error) ?? (row.status === 'skipped' ? row.note : undefined),
    // A planned row (a total's dry run) carries its planned bytes and predicted PSNR.
    outputBytes: row.bytes ?? row.plan?.bytes,
    psnr: row.psnr ?? row.plan?.psnr,
  }));
  return { files, reportPath: r.summary.report, cancelled: r.interrupted };
}

/** An error as the app shows it: without the CLI's advice (a flag such as --timeout), which the app words itself. */
function appMessage(error: ErrorPayload | undefined): string | undefined {
  return error ? adviceOf(error).core : undefined;
}
