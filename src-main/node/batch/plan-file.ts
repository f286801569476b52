/**
 * The byte plan of a collection: from survey entries and a total to each file's byte cap, with the
 * refusals that come before anything is written, and the shared plan file (`batch --plan … -o plan.json`)
 * that shards on other machines encode from.
 */
import { readFile } from 'node:fs/promises';
import { type TotalSize, UsageError } from '../../contract';
import { writeFileAtomic } from '../io/atomic';
import { type Allocation, allocate, type Favour, minimumTotal } from './allocate';
import { type RateCurve, rateCurve } from './rate-curve';
import { readSurvey, type SurveyEntry, type SurveyFailure } from './survey-file';

/** A plan shared by shards: one byte cap per file. */
export interface SharedPlan {
  kind: 'rankfold-plan';
  v: 1;
  /** The survey settings the curves hold for; a shard encodes with them. */
  settings: string;
  /** The total the run is held to, in bytes, and as the user wrote it. */
  total: number;
  totalText: string;
  /** Bytes held back from the allocation for drift (see docs/scale.md). */
  reserve: number;
  favour: Favour;
  minPsnr?: number;
  floor: number;
  /** Sum of the caps, and the smallest total the files could take. */
  planned: number;
  minimum: number;
  files: { path: string; bytes: number; psnr: number }[];
  /** One ratio for all at the same total (the survey's prediction): its worst PSNR, and the bytes it needs for the floor. */
  oneRatioWorst?: number;
  oneRatioBytes?: number;
  /** Files left out of the plan (unreadable at the survey), with the reason. */
  excluded: SurveyFailure[];
}

/** Human size in decimal (SI) units. */
export function sizeText(bytes: number): string {
  const units: [number, string][] = [
    [1e12, 'TB'],
    [1e9, 'GB'],
    [1e6, 'MB'],
    [1e3, 'kB'],
  ];
  for (const [u, name] of units)
    if (bytes >= u) return `${(bytes / u).toFixed(bytes >= 100 * u ? 0 : 2)} ${name}`;
  return `${bytes} bytes`;
}

/** The total in bytes: as given, or a share of the raw samples of `rawBytes` (all inputs). */
export function totalBytes(t: TotalSize, rawBytes: number): number {
  return t.kind === 'bytes' ? t.bytes : Math.floor((rawBytes * t.percent) / 100);
}

export interface CollectionPlan {
  curves: Map<string, RateCurve>;
  allocation: Allocation;
  minimum: number;
}

/**
 * Allocate `available` bytes over the surveyed files.
 * @throws UsageError naming the smallest total (or the bytes --min-psnr needs) when it does not fit.
 */
export function planCollection(
  entries: readonly SurveyEntry[],
  available: number,
  how: { favour: Favour; minPsnr?: number; totalText: string; total: number },
): CollectionPlan {
  const curves = new Map(entries.map((e) => [e.path, rateCurve(e.points)]));
  const list = [...curves.values()];
  const minimum = minimumTotal(list) + (how.total - available);
  const files = `${entries.length} file${entries.length === 1 ? '' : 's'}`;
  if (minimumTotal(list) > available)
    throw new UsageError(
      `the total ${how.totalText} (${how.total} bytes) is below the smallest total these ${files} can take: ${minimum} bytes (${sizeText(minimum)}, each file at the smallest size the survey measured); give at least that, and nothing was written`,
    );
  if (how.minPsnr !== undefined) {
    const need = minimumTotal(list, how.minPsnr) + (how.total - available);
    if (need - (how.total - available) > available)
      throw new UsageError(
        `--min-psnr ${how.minPsnr} needs about ${need} bytes (${sizeText(need)}) for these ${files} by the survey's prediction, more than the total ${how.totalText} (${how.total} bytes); nothing was written`,
      );
  }
  const allocation = allocate(list, available, how.favour, how.minPsnr)!;
  return { curves, allocation, minimum };
}

/** Read a shared plan. @throws UsageError naming the file. */
export async function readSharedPlan(file: string): Promise<SharedPlan> {
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch (err) {
    throw new UsageError(`plan ${file} cannot be read (${(err as NodeJS.ErrnoException).code})`);
  }
  try {
    const p = JSON.parse(text) as SharedPlan;
    if (p.kind === 'rankfold-plan' && Array.isArray(p.files) && Number.isFinite(p.total)) return p;
  } catch {}
  throw new UsageError(
    `${file} is not a Rankfold plan (made by rankfold batch --plan … --total SIZE -o plan.json)`,
  );
}

async function writeSharedPlan(file: string, p: SharedPlan): Promise<void> {
  if (!/\.json$/i.test(file)) throw new UsageError(`--plan writes a .json file, not ${JSON.stringify(file)}`);
  await writeFileAtomic(file, `${JSON.stringify(p, null, 1)}\n`, { force: true });
}

/**
 * `batch --plan SURVEY.json… --total SIZE -o plan.json`: join the shards' survey manifests, hold back the
 * reserve, allocate the rest, and write the plan.
 * @throws UsageError for unreadable manifests, manifests of different settings, or an impossible total.
 */
export async function makeSharedPlan(o: {
  surveys: string[];
  total: TotalSize;
  favour: Favour;
  minPsnr?: number;
  reservePercent: number;
  output: string;
}): Promise<SharedPlan> {
  const entries = new Map<string, SurveyEntry>();
  const excluded: SurveyFailure[] = [];
  let settings: string | undefined;
  for (const file of o.surveys) {
    const s = (await readSurvey(file, true))!;
    if (settings !== undefined && s.settings !== settings)
      throw new UsageError(
        `survey ${file} was measured with ${s.settings}, the others with ${settings}; survey again with one setting`,
      );
    settings = s.settings;
    for (const e of s.files) entries.set(e.path, e);
    excluded.push(...s.failed);
  }
  const files = [...entries.values()].sort((a, b) => (a.path < b.path ? -1 : 1));
  const raw = files.reduce((s, e) => s + e.rawBytes, 0);
  const total = totalBytes(o.total, raw);
  const reserve = Math.floor((total * o.reservePercent) / 100);
  const totalText = o.total.kind === 'bytes' ? sizeText(total) : `${o.total.percent}% of ${sizeText(raw)}`;
  const { allocation: a, minimum } = planCollection(files, total - reserve, { ...o, totalText, total });
  const one = oneRatio(files, total - reserve, a.floor);
  const plan: SharedPlan = {
    kind: 'rankfold-plan',
    v: 1,
    settings: settings ?? '',
    total,
    totalText,
    reserve,
    favour: o.favour,
    minPsnr: o.minPsnr,
    floor: a.floor,
    planned: a.bytes.reduce((s, b) => s + b, 0),
    minimum,
    files: files.map((e, i) => ({ path: e.path, bytes: a.bytes[i], psnr: a.psnr[i] })),
    ...one,
    excluded,
  };
  await writeSharedPlan(o.output, plan);
  return plan;
}

/**
 * One ratio for all files at the same `total`, by the survey's curves: the worst file's predicted PSNR, and the
 * bytes one ratio would need to give every file `floor` (what the plan saves is that less the plan's bytes).
 */
export function oneRatio(
  entries: readonly SurveyEntry[],
  total: number,
  floor: number,
): { oneRatioWorst?: number; oneRatioBytes?: number } {
  if (!entries.length) return {};
  const raw = entries.reduce((s, e) => s + e.rawBytes, 0);
  const curves = entries.map((e) => rateCurve(e.points));
  const share = total / raw;
  const oneRatioWorst = Math.min(...curves.map((c, i) => c.psnrAt(share * entries[i].rawBytes)));
  const need = Math.max(...curves.map((c, i) => c.bytesFor(floor) / entries[i].rawBytes));
  return { oneRatioWorst, oneRatioBytes: Math.ceil(need * raw) };
}
