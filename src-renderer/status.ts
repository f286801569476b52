/**
 * The status bar: one line of text (red for errors, mirrored in data-error for tests), a progress bar and
 * a Cancel button for the job the page is waiting on. Errors also show in a dismissible message at the
 * top of the page, in the app's words (no CLI flags, no server paths).
 */
import type { ProgressEvent } from '../src-main/contract';
import { bind } from './bind';
import { guiMessage, openFailedText, progressText } from './captions';
import type { PageState } from './state';
import type { PageApi } from './transport';

export interface StatusBar {
  show(text: string, isError?: boolean): void;
  /** Follow `job` (progress, Cancel) with `label` as the status, or stop following with `undefined`. */
  busy(job: string | undefined, label?: string): void;
  /** Show an error's message. */
  fail(err: unknown): void;
  /** A file that could not be opened, named as the user gave it. */
  failOpen(given: string, err: unknown): void;
  /** Show a progress event of the followed job. */
  progress(e: ProgressEvent): void;
}

/** A fresh job id for progress events and cancelling. */
export const newJob = () => `j${Math.random().toString(36).slice(2, 10)}`;

export function createStatusBar(api: PageApi, state: PageState): StatusBar {
  const el = bind(document, {
    text: '#status-text',
    progress: 'progress#status-progress',
    cancel: 'button#status-cancel',
    alert: '#alert',
    alertText: '#alert-text',
    dismiss: 'button#alert-dismiss',
  });
  const messageOf = (err: unknown) => (err instanceof Error ? err.message : String(err));
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
  el.cancel.addEventListener('click', () => {
    if (state.job) void api.cancel(state.job);
  });
  return {
    show,
    busy(job, label) {
      state.job = job;
      el.progress.hidden = !job;
      el.cancel.hidden = !job;
      if (job && label) show(label);
      el.progress.removeAttribute('value');
    },
    fail(err) {
      const text = guiMessage(messageOf(err));
      show(text, true);
      alert(text);
    },
    failOpen(given, err) {
      const text = openFailedText(given, messageOf(err));
      show(text, true);
      alert(text);
    },
    progress(e) {
      if (e.total > 0) {
        el.progress.max = e.total;
        el.progress.value = e.done;
      }
      show(progressText(e));
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
