/**
 * The Batch panel: every scan of an input folder compressed to an output folder at one budget, a row per
 * file with its progress, and the run's report.
 */
import {
  type BatchFileStatus,
  type BatchRequest,
  type ProgressEvent,
  parseTotalText,
  type TotalSize,
} from '../src-main/contract';
import { bind } from './bind';
import { parseBudgetField } from './budget-field';
import {
  batchDoneStatus,
  batchFileMessage,
  batchProgressText,
  batchRowText,
  batchRunLabel,
} from './captions';
import type { PageState } from './state';
import { newJob, type StatusBar } from './status';
import type { Tab } from './tabs';
import type { PageApi } from './transport';

type FileProgress = Pick<ProgressEvent, 'done' | 'total' | 'stage' | 'file' | 'message'> & { job?: string };

export interface BatchPanel {
  /** A progress event of the running batch. */
  progress(e: FileProgress): void;
  /** Put a folder in the input field and show the panel. */
  offerFolder(path: string): void;
}

export function setupBatchPanel(
  api: PageApi,
  state: PageState,
  bar: StatusBar,
  selectTab: (t: Tab) => void,
): BatchPanel {
  const el = bind(document, {
    input: 'input#batch-in',
    output: 'input#batch-out',
    budget: 'input#batch-budget',
    run: 'button#batch-run',
    cancel: 'button#batch-cancel',
    report: 'button#batch-report',
    files: 'ol#batch-files',
    total: 'input#batch-total',
    plan: 'button#batch-plan',
    plot: 'figure#batch-plan-plot',
    plotCaption: 'figcaption#batch-plan-caption',
    plotSvg: 'svg#batch-plan-svg',
  });
  const rows = new Map<string, HTMLLIElement>();

  let lastStarted: string | undefined;
  const progress = (e: FileProgress) => {
    let li = e.file ? rows.get(e.file) : undefined;
    if (e.file && !li) {
      // A row per file as it starts.
      li = document.createElement('li');
      rows.set(e.file, li);
      el.files.append(li);
      lastStarted = e.file;
    }
    // While it runs: the determinate bar, time left and Cancel of the status bar, in words.
    if (e.job && e.job === state.job && e.stage !== 'planning') {
      bar.relabel(e.job, batchRunLabel(rows.size, e.done, e.total, lastStarted));
      bar.progress({ job: e.job, done: e.done, total: e.total, stage: '' });
    } else bar.show(e.stage === 'planning' && e.message ? `Batch: ${e.message}` : batchProgressText(e));
    if (!e.file || !li) return;
    li.dataset.state = e.stage;
    li.textContent = batchRowText({ ...e, file: e.file });
  };

  /** Folders chosen (the output may not exist yet: it is then offered as a new folder, created by the run). */
  const folders = async (input: string, output: string) => {
    const inPick = await api.pick({ kind: 'folder', suggested: input });
    const outPick = await api
      .pick({ kind: 'folder', suggested: output })
      .catch(() => api.pick({ kind: 'save', suggested: output }));
    return inPick.path && outPick.path ? { input: inPick.path, output: outPick.path } : undefined;
  };

  const start = async (dryRun: boolean) => {
    const input = el.input.value.trim();
    const output = el.output.value.trim();
    if (!input || !output) return bar.show('Type the input and output folders first.', true);
    const totalText = el.total.value.trim();
    if (dryRun && !totalText) return bar.show('Type a total for the folder first, e.g. 40GB or 4%.', true);
    const job = newJob();
    state.batchJob = job;
    rows.clear();
    el.files.replaceChildren();
    // "Finished" belongs to one run: a plan followed by a run must not read as finished while the run goes.
    delete el.files.dataset.finished;
    el.cancel.disabled = false;
    el.run.disabled = true;
    el.plan.disabled = true;
    el.report.disabled = true;
    try {
      const budget = parseBudgetField(el.budget.value);
      const total: TotalSize | undefined = totalText ? parseTotalText(totalText) : undefined;
      const chosen = await folders(input, output);
      if (!chosen) return;
      lastStarted = undefined;
      if (total) bar.show('Measuring every scan to plan the total…');
      else bar.busy(job, batchRunLabel(0, 0, 0), 'batch');
      const req: BatchRequest = {
        ...chosen,
        budget,
        tile: state.tiled ? state.tile : 'auto',
        job,
        total,
        dryRun,
      };
      const r = await api.batch(req);
      for (const f of r.files)
        progress({
          done: 0,
          total: r.files.length,
          stage: f.state,
          file: f.file,
          message: batchFileMessage(f),
        });
      if (total) drawPlan(r.files, dryRun);
      state.reportId = r.reportId;
      el.report.disabled = !r.reportId;
      el.files.dataset.finished = 'true';
      const done = batchDoneStatus(r);
      bar.show(dryRun ? 'Plan ready: nothing was written.' : done.text, !dryRun && done.isError);
    } catch (err) {
      bar.fail(err);
    } finally {
      if (state.job === job) bar.busy(undefined);
      state.batchJob = undefined;
      el.cancel.disabled = true;
      el.run.disabled = false;
      el.plan.disabled = false;
    }
  };

  /** The planned (or achieved) PSNR of every file as a histogram, before or after the run. */
  const drawPlan = (files: BatchFileStatus[], planned: boolean) => {
    const xs = files.map((f) => f.psnr).filter((v): v is number => v !== undefined && Number.isFinite(v));
    el.plot.hidden = !xs.length;
    if (!xs.length) return;
    const lo = Math.floor(Math.min(...xs));
    const hi = Math.max(lo + 1, Math.ceil(Math.max(...xs)));
    const bins = Math.min(12, hi - lo);
    const counts = new Array(bins).fill(0);
    for (const x of xs) counts[Math.min(bins - 1, Math.floor(((x - lo) / (hi - lo)) * bins))]++;
    const top = Math.max(...counts);
    const w = 300 / bins;
    const svgNs = 'http://www.w3.org/2000/svg';
    const shapes = counts.map((c, i) => {
      const r = document.createElementNS(svgNs, 'rect');
      const h = (90 * c) / top;
      r.setAttribute('x', String(10 + i * w + 1));
      r.setAttribute('y', String(95 - h));
      r.setAttribute('width', String(w - 2));
      r.setAttribute('height', String(h));
      r.setAttribute('fill', '#3f6f8f');
      const t = document.createElementNS(svgNs, 'title');
      const a = lo + ((hi - lo) * i) / bins;
      t.textContent = `${a.toFixed(1)}–${(a + (hi - lo) / bins).toFixed(1)} dB: ${c} file${c === 1 ? '' : 's'}`;
      r.append(t);
      return r;
    });
    const label = (x: number, text: string, anchor: string) => {
      const t = document.createElementNS(svgNs, 'text');
      t.setAttribute('x', String(x));
      t.setAttribute('y', '112');
      t.setAttribute('text-anchor', anchor);
      t.setAttribute('font-size', '10');
      t.textContent = text;
      return t;
    };
    el.plotSvg.replaceChildren(...shapes, label(10, `${lo} dB`, 'start'), label(310, `${hi} dB`, 'end'));
    el.plotCaption.textContent = `${planned ? 'Planned' : 'Achieved'} PSNR of ${xs.length} file${xs.length === 1 ? '' : 's'}: lowest ${Math.min(...xs).toFixed(2)} dB, highest ${Math.max(...xs).toFixed(2)} dB`;
    // The plot's accessible name says which it is, planned or achieved.
    el.plotSvg.setAttribute('aria-label', `${planned ? 'Planned' : 'Achieved'} PSNR per file`);
  };

  el.run.addEventListener('click', () => void start(false));
  el.plan.addEventListener('click', () => void start(true));
  el.cancel.addEventListener('click', () => {
    if (state.batchJob) void api.cancel(state.batchJob);
  });
  el.report.addEventListener('click', () => {
    if (state.reportId) void api.openReport(state.reportId);
  });

  return {
    progress,
    offerFolder(path) {
      el.input.value = path;
      selectTab('batch');
    },
  };
}
