/**
 * The survey manifest of `batch --total` (`rankfold-survey[-IofN].json`, beside the manifest): every file's
 * rate–quality points, the files that could not be surveyed, and how the points were measured. It is
 * written once the survey ends, atomically, so `--resume` and `--plan` read it instead of surveying again.
 * An entry stands while its file keeps the same relative path, size and modification time, and the survey
 * settings (tile, page, layers) are the same.
 */
import { readFile, stat } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { type CompressOptions, toErrorPayload, UsageError } from '../../contract';
import { writeFileAtomic } from '../io/atomic';
import type { BatchWork, BatchWorkResult, SurveyJobResult } from './job';
import type { PlannedFile } from './plan';
import { eachLimit, WorkerPool } from './pool';
import type { SurveyedFile } from './run-options';

export interface SurveyEntry extends SurveyJobResult {
  path: string;
  size: number;
  mtimeMs: number;
}

export interface SurveyFailure {
  path: string;
  message: string;
  /** The image reader's refusal kind, when it has one (`not-an-image`: listed as skipped, not failed). */
  refusal?: string;
}

export interface SurveyManifest {
  kind: 'rankfold-survey';
  v: 1;
  /** The settings the points hold for (`tile=auto page=0 layers=auto`). */
  settings: string;
  shard: string;
  files: SurveyEntry[];
  /** Unreadable files: listed, excluded from every plan. */
  failed: SurveyFailure[];
  /** Wall time of the survey that made the entries new in this file, ms. */
  elapsedMs: number;
}

/** `rankfold-manifest-1of4.jsonl` → `rankfold-survey-1of4.json`, in the same folder. */
export function surveyPathFor(manifest: string): string {
  const base = basename(manifest)
    .replace(/\.jsonl$/i, '')
    .replace(/^rankfold-manifest/, 'rankfold-survey');
  return join(dirname(manifest), `${base === basename(manifest) ? `${base}-survey` : base}.json`);
}

export function surveySettings(c: CompressOptions): string {
  return `tile=${c.tile} page=${c.page ?? 0} layers=${c.layers ?? 'auto'}`;
}

/** Read a survey manifest; undefined when there is none. @throws UsageError when it is not one. */
export async function readSurvey(file: string, mustExist = false): Promise<SurveyManifest | undefined> {
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch (err) {
    if (!mustExist && (err as NodeJS.ErrnoException).code === 'ENOENT') return undefined;
    throw new UsageError(`survey manifest ${file} cannot be read (${(err as NodeJS.ErrnoException).code})`);
  }
  try {
    const s = JSON.parse(text) as SurveyManifest;
    if (s.kind === 'rankfold-survey' && Array.isArray(s.files) && Array.isArray(s.failed)) return s;
  } catch {}
  throw new UsageError(`${file} is not a Rankfold survey manifest (rankfold-survey*.json)`);
}

export async function writeSurvey(file: string, s: SurveyManifest): Promise<void> {
  await writeFileAtomic(file, `${JSON.stringify(s, null, 1)}\n`, { force: true });
}

interface SurveyRun {
  workerFile: string | URL;
  jobs: number;
  compress: CompressOptions;
  timeoutMs: number;
  signal?: AbortSignal;
  onFile?: (done: number, total: number, file?: SurveyedFile) => void;
}

/**
 * Survey `files`, reusing the entries of `previous` that still stand. Files whose survey fails are listed
 * with the reason (they are excluded from the plan).
 */
export async function surveyFiles(
  files: PlannedFile[],
  previous: SurveyManifest | undefined,
  run: SurveyRun,
  shard: string,
): Promise<SurveyManifest & { reused: number }> {
  const started = performance.now();
  const settings = surveySettings(run.compress);
  const old = new Map(previous?.settings === settings ? previous.files.map((e) => [e.path, e]) : []);
  const entries: SurveyEntry[] = [];
  const failed: SurveyFailure[] = [];
  const todo: (PlannedFile & { mtimeMs: number; bytes: number })[] = [];
  let reused = 0;
  for (const f of files) {
    let st: { size: number; mtimeMs: number };
    try {
      st = await stat(f.inputAbs);
    } catch (err) {
      failed.push({
        path: f.path,
        message: `${f.path}: cannot be read (${(err as NodeJS.ErrnoException).code})`,
      });
      continue;
    }
    const e = old.get(f.path);
    if (e && e.size === st.size && e.mtimeMs === st.mtimeMs) {
      entries.push(e);
      reused++;
    } else todo.push({ ...f, mtimeMs: st.mtimeMs, bytes: st.size });
  }
  if (todo.length) {
    const pool = new WorkerPool<BatchWork, BatchWorkResult>(run.workerFile, Math.min(run.jobs, todo.length));
    const stop = () => void pool.close();
    run.signal?.addEventListener('abort', stop, { once: true });
    let done = 0;
    try {
      // Largest first, as the encode does, so no worker idles on one big scan at the end.
      const order = todo.slice().sort((a, b) => b.bytes - a.bytes || (a.path < b.path ? -1 : 1));
      await eachLimit(order, pool.size, async (f) => {
        const r = await pool.run(
          { kind: 'survey', input: f.inputAbs, options: run.compress },
          { timeoutMs: run.timeoutMs, label: f.path },
        );
        let seen: SurveyedFile = { path: f.path };
        if (r.ok) {
          const v = r.value as SurveyJobResult;
          entries.push({ ...v, path: f.path, size: f.bytes, mtimeMs: f.mtimeMs });
          const dbs = v.points.map((p) => p.psnr);
          seen = { path: f.path, psnr: [Math.min(...dbs), Math.max(...dbs)] };
        } else if (r.error.name !== 'CancelledError') {
          const refusal = r.error.details?.refusal;
          failed.push({
            path: f.path,
            message: r.error.message,
            ...(typeof refusal === 'string' ? { refusal } : {}),
          });
          seen = { path: f.path, error: r.error.message };
        }
        run.onFile?.(++done, order.length, seen);
      });
    } catch (err) {
      failed.push({ path: '', message: toErrorPayload(err).message });
    } finally {
      run.signal?.removeEventListener('abort', stop);
      await pool.close();
    }
  }
  // Entries of files not asked about this time (kept by --resume, say) stay in the manifest.
  const asked = new Set(files.map((f) => f.path));
  for (const [p, e] of old) if (!asked.has(p)) entries.push(e);
  const byPath = (a: { path: string }, b: { path: string }) =>
    a.path < b.path ? -1 : a.path > b.path ? 1 : 0;
  return {
    kind: 'rankfold-survey',
    v: 1,
    settings,
    shard,
    files: entries.sort(byPath),
    failed: failed.sort(byPath),
    elapsedMs: todo.length ? performance.now() - started : (previous?.elapsedMs ?? 0),
    reused,
  };
}
