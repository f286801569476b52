/**
 * The status bar: one line of text (red for errors, mirrored in data-error for tests), a determinate
 * progress bar with the time left, and a Cancel button for the job the page is waiting on (Cancel asks
 * the back end to stop the job's worker). Errors also show in a dismissible message at the top of the
 * page, in the app's words (no CLI flags, no server paths).
 */
import type { ProgressEvent } from '../src-main/contract';
import { bind } from './bind';
import { guiMessage, openFailedText, type PageError } from './captions';
import { expectedMs, progressLine, shownFraction } from './progress-words';
import type { PageState } from './state';
import type { PageApi } from './transport';

export interface StatusBar {
  show(text: string, isError?: boolean): void;
  /**
   * Follow `job` (progress, Cancel) with `label` as the status, or stop following with `undefined`.
   * `kind` names the sort of job, so its length can be expected from the last one of that sort.
   */
  busy(job: string | undefined, label?: string, kind?: string): void;
  /** Show an error's message. */
  fail(err: unknown): void;
  /** A file that could not be opened, named as the user gave it. */
  failOpen(given: string, err: unknown): void;
  /** Show a progress event of the followed job. */
  progress(e: ProgressEvent): void;
  /** New words for the followed job `job` (e.g. "file 2 of 3"), keeping its bar and time left. */
  relabel(job: string, label: string): void;
}

/** A fresh job id for progress events and cancelling. */
export const newJob = () => `j${Math.random().toString(36).slice(2, 10)}`;

/** A thrown value as the captions read it: its message and, for the contract's errors, its details. */
const pageError = (err: unknown): PageError =>
  err instanceof Error
    ? { message: err.message, details: (err as { details?: Record<string, unknown> }).details }
    : String(err);

/** How often the bar and the time left are redrawn while a job runs. */
const TICK_MS = 250;

/** The job being followed: what it is, when it started and how far the back end says it is. */
interface Followed {
  job: string;
  label: string;
  kind: string;
  scanId?: string;
  started: number;
  fraction: number;
  stage?: string;
  expected: number;
}

export function createStatusBar(api: PageApi, state: PageState): StatusBar {
  const el = bind(document, {
    text: '#status-text',
    progress: 'progress#status-progress',
    cancel: 'button#status-cancel',
    alert: '#alert',
    alertText: '#alert-text',
    dismiss: 'button#alert-dismiss',
  });
  const alert = (text: string) => {
    el.alertText.textContent = text;
    el.alert.hidden = false;
  };
  el.dismiss.addEventListener('click', () => {
    el.alert.hidden = true;
  });
  const show = (text: string, isError = false) => {
    el.text.textContent = text;
    el.text.style.color = isError ? '#9b2c1a' : '';
    if (isError) el.text.dataset.error = text;
    else delete el.text.dataset.error;
  };
  /** How long the last job of each kind took on the open scan. */
  const lasted = new Map<string, number>();
  let lastedScan: string | undefined;
  let followed: Followed | undefined;
  let timer: ReturnType<typeof setInterval> | undefined;

  const draw = () => {
    const f = followed;
    if (!f) return;
    const elapsedMs = performance.now() - f.started;
    const fraction = shownFraction(f.fraction, elapsedMs, f.expected);
    el.progress.max = 1;
    el.progress.value = fraction;
    el.progress.setAttribute('aria-valuetext', `${Math.round(100 * fraction)} %`);
    show(progressLine({ label: f.label, stage: f.stage, fraction, elapsedMs, expectedMs: f.expected }));
  };

  const stop = () => {
    const f = followed;
    if (f && f.scanId === state.scan?.scanId) lasted.set(f.kind, performance.now() - f.started);
    followed = undefined;
    if (timer) clearInterval(timer);
    timer = undefined;
  };

  el.cancel.addEventListener('click', () => {
    if (!state.job) return;
    show('Cancelling…');
    void api.cancel(state.job);
  });
  const cancelled = (err: unknown) => (err as { name?: string } | undefined)?.name === 'CancelledError';
  return {
    show,
    busy(job, label, kind = 'job') {
      if (!job) stop();
      else followed = undefined;
      state.job = job;
      el.progress.hidden = !job;
      el.cancel.hidden = !job;
      if (!job) return;
      const scan = state.scan;
      if (scan?.scanId !== lastedScan) {
        lasted.clear();
        lastedScan = scan?.scanId;
      }
      const mp = scan ? (scan.width * scan.height) / 1e6 : 1;
      followed = {
        job,
        label: label ?? 'Working…',
        kind,
        scanId: scan?.scanId,
        started: performance.now(),
        fraction: 0,
        expected: expectedMs(kind, mp, lasted.get(kind)),
      };
      draw();
      timer ??= setInterval(draw, TICK_MS);
    },
    fail(err) {
      followed = undefined;
      if (cancelled(err)) return show('Cancelled.');
      const text = guiMessage(pageError(err));
      show(text, true);
      alert(text);
    },
    failOpen(given, err) {
      const text = openFailedText(given, pageError(err));
      show(text, true);
      alert(text);
    },
    relabel(job, label) {
      if (followed?.job !== job) return;
      followed.label = label;
      draw();
    },
    progress(e) {
      const f = followed;
      if (!f || f.job !== e.job) return;
      if (e.total > 0) f.fraction = Math.max(f.fraction, Math.min(1, e.done / e.total));
      f.stage = e.stage;
      draw();
    },
  };
}

/** Route progress events: the batch's to `onBatch`, the followed job's to the status bar. */
export function watchProgress(
  api: PageApi,
  state: PageState,
  bar: StatusBar,
  onBatch: (e: ProgressEvent) => void,
): void {
  api.onProgress((e) => {
    if (e.job === state.batchJob) return onBatch(e);
    if (e.job === state.job) bar.progress(e);
  });
}
