/**
 * `rankfold batch IN_DIR -o OUT_DIR [budget] [options]` and `rankfold batch --merge MANIFEST…`.
 * Exit codes: 0 every file succeeded (or was kept by --resume; entries that are not regular files are listed
 * as skipped, which is not a failure), 2 some files failed or the run was interrupted (the failures are
 * listed), 1 usage error, or another run holds the output folder's lock. See docs/cli.md.
 */
import type { BatchEvent, BatchRow, BatchSummary } from '../../../contract';
import { LOSSY_CAUTION, OPTIONS, rangeText } from '../../../contract';
import { collectionJson, collectionLines, mergedTotalLines, planLines } from '../../batch/collection-text';
import { rowToJson } from '../../batch/manifest';
import { mergeManifests } from '../../batch/merge';
import { makeSharedPlan } from '../../batch/plan-file';
import { type ProgressView, surveyedText, surveyProgress, terminalProgress } from '../../batch/progress';
import { runBatch } from '../../batch/run';
import { batchWorkerFile } from '../../batch/worker-path';
import { parseBatchArgs } from '../args/batch-args';
import type { CliIO, Command } from '../args/command';

const HELP = `rankfold batch: compress a whole folder unattended, with a manifest, a CSV and an HTML report.

Usage:
  rankfold batch IN_DIR -o OUT_DIR (--rank K | --budget SIZE | --bpp X | --min-psnr DB | --min-ssim S) [options]
  rankfold batch IN_DIR -o OUT_DIR --total SIZE [--favour floor|mean] [--min-psnr DB] [options]
  rankfold batch IN_DIR -o OUT_DIR --survey [--shard I/N]
  rankfold batch --plan SURVEY.json… --total SIZE [--favour floor|mean] [--min-psnr DB] [--reserve P] -o plan.json
  rankfold batch IN_DIR -o OUT_DIR --plan plan.json [--shard I/N]
  rankfold batch --merge MANIFEST.jsonl… [-o DIR] [--report FILE.html] [--manifest FILE.jsonl]

Walks IN_DIR recursively (hidden files and folders skipped) and writes one .rkf per input under OUT_DIR,
mirroring the folders. Nothing is ever written inside IN_DIR; OUT_DIR may not be IN_DIR or inside it.
Entries that are not regular files (FIFOs, devices, sockets, links to them or to folders, broken or
looping links) are never opened, and files that are not scans (a text file) are not compressed: both are
listed as skipped, with the reason, in the summary, manifest and report. One run at a time per manifest: a second run into the same OUT_DIR (same shard) is refused while the
first holds OUT_DIR/rankfold-manifest[-IofN].jsonl.lock; a lock left by a dead run on this host is taken over.

Budget (exactly one, as for \`rankfold compress\`):
  --rank K             keep K singular values per plane (${rangeText(OPTIONS.rank)})
  --budget SIZE        file size limit: 250kB, 1.5MB, 2MiB, 120000 (bytes) or 5% of the raw samples
  --bpp X              bits per pixel (${rangeText(OPTIONS.bpp)})
  --min-psnr DB        smallest file with at least this PSNR (${rangeText(OPTIONS.minPsnr, true)})
  --min-ssim S         smallest file with at least this SSIM (${rangeText(OPTIONS.minSsim)})
  --tile N|auto|0      tile size ${rangeText(OPTIONS.tile)}, auto, or 0 for whole planes (default auto)
  --pixel-limit N      refuse inputs with more pixels (default 268402689)

A total for the whole folder (instead of a budget per file):
  --total SIZE         the .rkf files together take at most SIZE: 2TB, 40GB, 250MB, 120000 (bytes) or 5% of
                       the raw samples of all inputs (kB, MB, GB, TB are decimal: 1 GB = 10^9 bytes)
  --favour floor|mean  floor (default): the highest PSNR every file reaches; mean: the highest mean PSNR
  --min-psnr DB        with --total, a guard: stop before writing anything if the floor would be below DB
  --survey             measure each file's rate–quality curve only (OUT_DIR/rankfold-survey[-IofN].json)
  --plan FILE…         with --total and -o plan.json: plan from survey files; alone: encode from that plan
  --reserve P          per cent of the total a shared plan holds back (${rangeText(OPTIONS.reserve, true)}, default ${OPTIONS.reserve.default})

Batch:
  -j, --jobs N         worker threads (default: the number of cores)
  --include GLOB       only files matching GLOB (repeatable; a pattern without / matches in any folder)
  --exclude GLOB       skip files matching GLOB (repeatable)
  --resume             keep outputs whose recorded source hash matches the input; redo the rest
  --force              rewrite outputs that already exist
  --dry-run            list what would be done; write nothing
  --expand-check       decode every written file again and check its PSNR
  --timeout SEC        stop a file that takes longer (default 1800; 0 = no limit)
  --shard I/N          take slice I of N (I counts from 0), by a stable hash of each relative path
  --manifest FILE      manifest path (default OUT_DIR/rankfold-manifest[-IofN].jsonl; CSV beside it)
  --report FILE.html   report path (default beside the manifest)
  --json               one JSON line per event on stdout (start, each file, end)

Output names: a/b.png → a/b.rkf. When two inputs in one folder would share a name (a.png, a.tif; case and
Unicode form ignored), each keeps its whole name: a.png.rkf, a.tif.rkf.

Exit codes: 0 all files done or kept (skipped special files are not failures); 2 some files failed or
the run was interrupted (listed); 1 usage error, or another run is writing into OUT_DIR.

${LOSSY_CAUTION}
`;

function humanLine(e: Extract<BatchEvent, { event: 'file' }>): string {
  const n = `[${e.done}/${e.total}]`;
  if (e.status === 'failed') return `${n} FAILED ${e.path}: ${e.error?.message ?? 'unknown error'}\n`;
  if (e.status === 'planned' && e.plan)
    return `${n} would write ${e.output}  ←  ${e.path}: ${e.plan.bytes} bytes, predicted PSNR ${e.plan.psnr.toFixed(2)} dB\n`;
  if (e.status === 'planned')
    return `${n} would ${e.note === 'surveyed' ? 'plan' : 'write'} ${e.output}  ←  ${e.path}\n`;
  if (e.status === 'skipped') return `${n} skipped ${e.note ?? e.path}\n`;
  const psnr =
    e.psnr === undefined ? '' : Number.isFinite(e.psnr) ? ` PSNR ${e.psnr.toFixed(2)} dB` : ' exact';
  return `${n} ${e.status === 'kept' ? 'kept' : 'ok'} ${e.path} → ${e.output}${e.ratio !== undefined ? ` ratio ${e.ratio.toFixed(2)}` : ''}${psnr}\n`;
}

/** `, 2 skipped (not regular files), 1 skipped (not scans)`: special entries are never opened; non-scans were. */
function skippedText(rows: BatchRow[]): string {
  const skipped = rows.filter((r) => r.status === 'skipped');
  const special = skipped.filter((r) => r.output === '').length;
  const other = skipped.length - special;
  return `${special ? `, ${special} skipped (not regular files)` : ''}${other ? `, ${other} skipped (not scans)` : ''}`;
}

function summaryText(
  s: BatchSummary,
  warnings: string[],
  interrupted: boolean,
  rows: BatchRow[] = [],
  notices: string[] = [],
): string {
  const lines = [
    `batch: ${s.total} file${s.total === 1 ? '' : 's'}: ${s.ok} compressed, ${s.kept} kept, ${s.failed} failed${skippedText(rows)}${s.planned ? `, ${s.planned} planned (dry run)` : ''} in ${(s.elapsedMs / 1000).toFixed(1)} s` +
      (s.outputBytes
        ? `; ${s.outputBytes >= 1e6 ? `${(s.outputBytes / 1e6).toFixed(2)} MB` : `${(s.outputBytes / 1e3).toFixed(1)} kB`} written`
        : ''),
  ];
  if (interrupted) {
    const left = s.total - s.ok - s.kept - s.failed - (s.skipped ?? 0);
    lines.push(
      `batch: interrupted with ${left} file${left === 1 ? '' : 's'} not finished; run the same command with --resume to finish`,
    );
  }
  if (s.failures.length) {
    lines.push('Failed files:');
    for (const f of s.failures) lines.push(`  ${f}`);
  }
  const skipped = rows.filter((r) => r.status === 'skipped');
  if (skipped.length) {
    lines.push(
      skipped.every((r) => r.output === '')
        ? 'Skipped (not regular files, never opened):'
        : 'Skipped (not scans, or not regular files and never opened):',
    );
    for (const r of skipped) lines.push(`  ${r.note ?? r.path}`);
  }
  for (const w of warnings) lines.push(`warning: ${w}`);
  for (const n of notices) lines.push(`note: ${n}`);
  if (s.manifest) lines.push(`manifest: ${s.manifest}`);
  if (s.csv) lines.push(`csv:      ${s.csv}`);
  if (s.report) lines.push(`report:   ${s.report}`);
  return `${lines.join('\n')}\n`;
}

async function run(argv: string[], io: CliIO): Promise<number> {
  const args = parseBatchArgs(argv);
  if (args.mode === 'merge') {
    const r = await mergeManifests(args.manifests, args);
    const total = mergedTotalLines(r.rows);
    if (args.json)
      io.stdout(`${JSON.stringify({ event: 'end', summary: r.summary, warnings: r.warnings })}\n`);
    else
      io.stderr(
        `${summaryText(r.summary, r.warnings, false, r.rows)}${total.lines.map((l) => `${l}\n`).join('')}`,
      );
    return r.summary.failed > 0 || r.warnings.length > 0 || total.over ? 2 : 0;
  }
  if (args.mode === 'plan') {
    const plan = await makeSharedPlan(args);
    if (args.json) io.stdout(`${JSON.stringify({ event: 'plan', ...plan, files: plan.files.length })}\n`);
    else io.stderr(`${planLines(plan).join('\n')}\n`);
    return 0;
  }
  // A collection's dry run still surveys (trial encodes on the workers); it writes nothing.
  const surveys = Boolean(args.total || args.surveyOnly);
  const workerFile = args.dryRun && !surveys ? '' : batchWorkerFile();
  if (!args.json && !args.dryRun) io.stderr(`${LOSSY_CAUTION}\n`);
  let bar: ProgressView | undefined;
  // A collection run surveys before it encodes: the survey's bar first, the batch's bar once the plan is made.
  let survey: ReturnType<typeof surveyProgress> | undefined;
  let barTotal: number | undefined;
  let surveyEnded = !surveys;
  const startBar = () => {
    survey?.stop();
    survey = undefined;
    surveyEnded = true;
    if (barTotal !== undefined && !bar) bar = terminalProgress(barTotal);
  };
  const controller = new AbortController();
  const onSignal = () => controller.abort();
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  try {
    const result = await runBatch({
      ...args,
      libvipsThreads: 1,
      workerFile,
      signal: controller.signal,
      onEvent: (e) => {
        if (args.json)
          io.stdout(e.event === 'file' ? `${rowToJson(e as never)}\n` : `${JSON.stringify(e)}\n`);
        if (e.event === 'start' && io.isTTY && !args.dryRun) {
          barTotal = e.total;
          if (surveyEnded) startBar();
        }
        if (e.event === 'file' && !bar && !args.json) io.stderr(humanLine(e));
        else if (e.event === 'file' && bar && e.status === 'failed') {
          // Failures are worth seeing live, above the bar.
          process.stderr.write(`\r\x1b[2K${humanLine(e)}`);
        }
      },
      onProgress: (p) => bar?.update(p),
      // Each file's survey as it ends: on the survey's bar, or a line of its own when stderr is not a terminal.
      onSurvey: (done, total, file) => {
        if (args.json) return;
        if (!io.isTTY) {
          if (file) io.stderr(`[${done}/${total}] surveyed ${surveyedText(file)}\n`);
          return;
        }
        survey ??= surveyProgress(total);
        survey.update(done, file);
      },
      // The survey and plan notes come once the survey has ended.
      onNote: (text) => {
        if (!surveyEnded) startBar();
        if (!args.json) io.stderr(`${text}\n`);
      },
    });
    survey?.stop();
    bar?.stop();
    io.stderr(summaryText(result.summary, result.warnings, result.interrupted, result.rows, result.notices));
    if (result.collection && !args.json)
      io.stderr(`${collectionLines(result.collection, result.rows).join('\n')}\n`);
    if (result.collection?.total && args.json)
      io.stdout(`${JSON.stringify(collectionJson(result.collection, result.rows))}\n`);
    if (result.summary.total === 0 && !args.json)
      io.stderr(
        'batch: no input files found (hidden files and folders are skipped; check IN_DIR and --include/--exclude)\n',
      );
    // Every warning is something lost or not recorded: a folder that could not be listed, a manifest,
    // CSV or report that could not be written.
    return result.summary.failed > 0 || result.interrupted || result.warnings.length > 0 ? 2 : 0;
  } finally {
    survey?.stop();
    bar?.stop();
    process.removeListener('SIGINT', onSignal);
    process.removeListener('SIGTERM', onSignal);
  }
}

export const command: Command = {
  name: 'batch',
  summary: 'compress a whole folder unattended, with a report',
  help: HELP,
  run,
};
