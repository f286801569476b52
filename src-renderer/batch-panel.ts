/**
 * The Batch panel: every scan of an input folder compressed to an output folder at one budget, a row per
 * file with its progress, and the run's report.
 */
import type { ProgressEvent } from '../src-main/contract';
import { bind } from './bind';
import { parseBudgetField } from './budget-field';
import { batchDoneStatus, batchFileMessage, batchProgressText, batchRowText } from './captions';
import type { PageState } from './state';
import { newJob, type StatusBar } from './status';
import type { Tab } from './tabs';
import type { PageApi } from './transport';

type FileProgress = Pick<ProgressEvent, 'done' | 'total' | 'stage' | 'file' | 'message'>;

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
  });
  const rows = new Map<string, HTMLLIElement>();

  const progress = (e: FileProgress) => {
    bar.show(batchProgressText(e));
    if (!e.file) return;
    let li = rows.get(e.file);
    if (!li) {
      li = document.createElement('li');
      rows.set(e.file, li);
      el.files.append(li);
    }
    li.dataset.state = e.stage;
    li.textContent = batchRowText({ ...e, file: e.file });
  };

  el.run.addEventListener('click', async () => {
    const input = el.input.value.trim();
    const output = el.output.value.trim();
    if (!input || !output) return bar.show('Type the input and output folders first.', true);
    const job = newJob();
    state.batchJob = job;
    rows.clear();
    el.files.replaceChildren();
    el.cancel.disabled = false;
    el.run.disabled = true;
    el.report.disabled = true;
    try {
      const budget = parseBudgetField(el.budget.value);
      const inPick = await api.pick({ kind: 'folder', suggested: input });
      const outPick = await api.pick({ kind: 'folder', suggested: output });
      if (!inPick.path || !outPick.path) return;
      bar.show('Batch running…');
      const r = await api.batch({
        input: inPick.path,
        output: outPick.path,
        budget,
        tile: state.tiled ? state.tile : 'auto',
        job,
      });
      for (const f of r.files)
        progress({
          done: 0,
          total: r.files.length,
          stage: f.state,
          file: f.file,
          message: batchFileMessage(f),
        });
      state.reportId = r.reportId;
      el.report.disabled = !r.reportId;
      el.files.dataset.finished = 'true';
      const done = batchDoneStatus(r);
      bar.show(done.text, done.isError);
    } catch (err) {
      bar.fail(err);
    } finally {
      state.batchJob = undefined;
      el.cancel.disabled = true;
      el.run.disabled = false;
    }
  });
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
