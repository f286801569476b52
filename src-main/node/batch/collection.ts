/**
 * `batch --total SIZE`, `--survey` and `--plan plan.json`: the two passes that fit a whole collection into a
 * byte total (issue #13). Pass 1 surveys each file's rate–quality curve (survey-file.ts), pass 2 encodes each
 * file under the byte cap its allotter gives (allot.ts). This file joins them to the batch runner: it runs
 * the survey, refuses an impossible total before anything is written, and hands the runner the files to
 * encode with their allotter.
 */
import { isNotAnImage } from '../image/refusals';
import type { Favour } from './allocate';
import { type Allotter, FixedAllotter, LiveAllotter } from './allot';
import type { PlannedFile } from './plan';
import { oneRatio, planCollection, readSharedPlan, type SharedPlan, sizeText, totalBytes } from './plan-file';
import { baseRow, outcomeRow } from './rows';
import type { Run } from './run-options';
import type { SpareInfo } from './spare';
import {
  readSurvey,
  type SurveyFailure,
  type SurveyManifest,
  surveyFiles,
  surveyPathFor,
  surveySettings,
  writeSurvey,
} from './survey-file';
import type { Tally } from './tally';

/** The plan's figures, for the summary and the report. */
export interface CollectionInfo {
  total: number;
  totalText: string;
  favour: Favour;
  minPsnr?: number;
  /** Floor of the first plan (predicted). */
  floor: number;
  /** Sum of the first plan's caps (predicted), and the smallest total the files could take. */
  planned: number;
  minimum: number;
  /** Bytes held back (shared plans only). */
  reserve: number;
  surveyMs: number;
  surveyReused: number;
  surveyFile?: string;
  excluded: SurveyFailure[];
  /** One ratio for all files at the same total (predicted by the survey): the worst file's PSNR. */
  oneRatioWorst?: number;
  /** Bytes one ratio for all would need to give every file the floor (predicted). */
  oneRatioBytes?: number;
  /** The bytes left under the total after the encode, and the worst files re-encoded with them (spare.ts). */
  spare?: SpareInfo;
}

/** Settings text of a collection run's rows (a file's own cap is appended as ` bytes=N`). */
export async function collectionSettings(run: Run): Promise<string> {
  const o = run.o;
  if (o.planFile) {
    run.sharedPlan = await readSharedPlan(o.planFile);
    return `plan total=${run.sharedPlan.total} ${run.sharedPlan.settings}`;
  }
  const t = o.total ? `total=${o.total.kind === 'bytes' ? o.total.bytes : `${o.total.percent}%`}` : 'survey';
  return `${t} favour=${o.favour ?? 'floor'}${o.minPsnr ? ` min-psnr=${o.minPsnr}` : ''} ${surveySettings(o.compress)}`;
}

/**
 * Survey and plan. Returns the files to encode and their allotter, or undefined when nothing is to be encoded
 * (`--survey`, `--dry-run`: their rows are already in the tally).
 * @throws UsageError for an impossible total or --min-psnr, before anything is written.
 */
export async function prepareCollection(
  run: Run,
  todo: PlannedFile[],
  tally: Tally,
): Promise<{ todo: PlannedFile[]; allotter: Allotter } | undefined> {
  const { o } = run;
  if (run.sharedPlan) return fromSharedPlan(run, run.sharedPlan, todo, tally);
  const surveyFile = surveyPathFor(run.files.manifest);
  const survey = await surveyFiles(
    todo,
    await readSurvey(surveyFile),
    { ...o, ...run, compress: o.compress, onFile: o.onSurvey },
    run.shardLabel,
  );
  const asked = new Set(todo.map((f) => f.path));
  const entries = survey.files.filter((e) => asked.has(e.path));
  o.onNote?.(
    `survey: ${entries.length} file${entries.length === 1 ? '' : 's'} measured in ${(survey.elapsedMs / 1000).toFixed(1)} s${survey.reused ? ` (${survey.reused} from ${surveyFile})` : ''}${survey.failed.length ? `; ${survey.failed.length} could not be read and are left out` : ''}`,
  );
  const excluded = excludeFailed(run, todo, survey, tally);
  const surveyed = new Set(entries.map((e) => e.path));
  const next = todo.filter((f) => surveyed.has(f.path));
  const save = async () => {
    const { reused: _, ...s } = survey;
    await writeSurvey(surveyFile, s);
  };
  if (o.surveyOnly) {
    for (const f of next) tally.emit(tally.add({ ...baseRow(f, run.shardLabel), note: 'surveyed' }));
    if (!o.dryRun) await save();
    run.collection = info(run, survey, excluded, 0, 0, Number.NaN, surveyFile);
    return undefined;
  }
  const kept = tally.rows.filter((r) => r.status === 'kept' || r.status === 'ok');
  const raw = entries.reduce((s, e) => s + e.rawBytes, 0) + kept.reduce((s, r) => s + (r.rawBytes ?? 0), 0);
  const total = totalBytes(o.total!, raw);
  const spent = kept.reduce((s, r) => s + (r.bytes ?? 0), 0);
  const favour = o.favour ?? 'floor';
  const totalText =
    o.total!.kind === 'bytes' ? sizeText(o.total!.bytes) : `${o.total!.percent}% of ${sizeText(raw)}`;
  const plan = planCollection(entries, total - spent, { favour, minPsnr: o.minPsnr, totalText, total });
  const a = plan.allocation;
  run.collection = {
    ...info(run, survey, excluded, total, a.bytes.reduce((s, b) => s + b, 0) + spent, a.floor, surveyFile),
    ...oneRatio(entries, total - spent, a.floor),
    minimum: plan.minimum,
  };
  o.onNote?.(
    `plan: ${next.length} file${next.length === 1 ? '' : 's'} into ${totalText} (${total} bytes${spent ? `, ${spent} already written` : ''}): predicted floor ${a.floor.toFixed(2)} dB, predicted total ${run.collection.planned} bytes`,
  );
  if (o.dryRun) {
    const at = new Map(entries.map((e, i) => [e.path, i]));
    for (const f of next) {
      const i = at.get(f.path)!;
      const row = baseRow(f, run.shardLabel);
      row.plan = { bytes: a.bytes[i], psnr: a.psnr[i], floor: a.floor, total };
      tally.emit(tally.add(row));
    }
    return undefined;
  }
  await save();
  return { todo: next, allotter: new LiveAllotter(plan.curves, total - spent, favour, o.minPsnr, a) };
}

/** Files the survey could not read: failed rows (non-images are skipped by the runner's rule), left out. */
function excludeFailed(run: Run, todo: PlannedFile[], survey: SurveyManifest, tally: Tally): SurveyFailure[] {
  const byPath = new Map(todo.map((f) => [f.path, f]));
  for (const x of survey.failed) {
    const f = byPath.get(x.path);
    if (f) tally.emit(tally.add(outcomeRow(f, run.shardLabel, leftOut(x))));
  }
  return survey.failed;
}

function info(
  run: Run,
  survey: SurveyManifest & { reused: number },
  excluded: SurveyFailure[],
  total: number,
  planned: number,
  floor: number,
  surveyFile: string,
): CollectionInfo {
  const o = run.o;
  return {
    total,
    totalText: o.total ? (o.total.kind === 'bytes' ? sizeText(o.total.bytes) : `${o.total.percent}%`) : '',
    favour: o.favour ?? 'floor',
    minPsnr: o.minPsnr,
    floor,
    planned,
    minimum: 0,
    reserve: 0,
    surveyMs: survey.elapsedMs,
    surveyReused: survey.reused,
    surveyFile,
    excluded,
  };
}

/** `--plan plan.json`: this shard's files and their caps from the shared plan. */
function fromSharedPlan(run: Run, plan: SharedPlan, todo: PlannedFile[], tally: Tally) {
  const caps = new Map(plan.files.map((f) => [f.path, { bytes: f.bytes, psnr: f.psnr, floor: plan.floor }]));
  const excluded = new Map(plan.excluded.map((x) => [x.path, x]));
  for (const f of todo) {
    const x = excluded.get(f.path);
    if (x) tally.emit(tally.add(outcomeRow(f, run.shardLabel, leftOut(x))));
  }
  run.collection = {
    total: plan.total,
    totalText: plan.totalText,
    favour: plan.favour,
    minPsnr: plan.minPsnr,
    floor: plan.floor,
    planned: plan.planned,
    minimum: plan.minimum,
    reserve: plan.reserve,
    oneRatioWorst: plan.oneRatioWorst,
    oneRatioBytes: plan.oneRatioBytes,
    surveyMs: 0,
    surveyReused: 0,
    excluded: plan.excluded,
  };
  const next = todo.filter((f) => !excluded.has(f.path));
  if (run.o.dryRun) {
    for (const f of next) {
      const row = baseRow(f, run.shardLabel);
      const c = caps.get(f.path);
      if (c) row.plan = { ...c, total: plan.total };
      tally.emit(tally.add(row));
    }
    return undefined;
  }
  return { todo: next, allotter: new FixedAllotter(caps, run.o.planFile!) };
}

/**
 * The error of a file the survey could not read. A file that is not an image keeps its refusal kind, so its row
 * is skipped with the reader's own sentence, word for word as a run without --total lists it; any other failure
 * adds that the file is left out of the plan.
 */
function leftOut(x: SurveyFailure) {
  if (isNotAnImage({ details: { refusal: x.refusal } }))
    return { name: 'InputError', message: x.message, details: { refusal: x.refusal } };
  return {
    name: 'InputError',
    message: `${x.message}; left out of the plan`,
    ...(x.refusal ? { details: { refusal: x.refusal } } : {}),
  };
}
