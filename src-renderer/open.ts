/**
 * Opening a scan: by upload (browser), by path, from the demo list or the desktop shell. A first
 * factorisation at a small rank is shown at once; a deeper one follows in the background, once the
 * encoder's figures for the opening rank (or for a budget typed meanwhile) are in. A chosen
 * `.rkf` file opens as a stack (./stack.ts) instead.
 */
import { bind } from './bind';
import { scanInfoText } from './captions';
import type { Evaluator } from './evaluate';
import { FIRST_PASS_RANK, secondPassRank } from './figures';
import { LowRankModel } from './model';
import { createOpeningNote } from './opening';
import type { Panes } from './panes';
import type { RankSlider } from './rank';
import type { SpectrumCharts } from './spectrum';
import type { PageState } from './state';
import { newJob, type StatusBar } from './status';
import type { PageApi } from './transport';

type ScanSource = Parameters<PageApi['openScan']>[0]['source'];

export interface Opener {
  open(source: ScanSource): Promise<void>;
  /** A typed or remembered path, through the back end's file check. */
  openPath(path: string): Promise<void>;
  /** A chosen path: a stack file (.rkf) opens in stack mode, anything else as a scan. */
  openChosen(path: string): Promise<void>;
  uploadAndOpen(f: File): Promise<void>;
}

export interface OpenerParts {
  api: PageApi;
  state: PageState;
  bar: StatusBar;
  charts: SpectrumCharts;
  rank: RankSlider;
  panes: Panes;
  evaluator: Evaluator;
  /** A new model's layer count, for the one-layer view. */
  setLayerCount(n: number): void;
  enableClean(): void;
  leaveStack(): void;
  openStack(path: string): Promise<void>;
  refreshRecent(): Promise<void>;
}

export function createOpener(p: OpenerParts): Opener {
  const { api, state, bar } = p;
  const el = bind(document, {
    scanInfo: '#scan-info',
    dropHint: '#drop-hint',
    file: 'input#file-input',
    pathForm: 'form#path-form',
    path: 'input#path-input',
  });
  const body = document.body;
  const opening = createOpeningNote();

  /**
   * Show a model at `rank`, or at the opening rank (which also makes the budget that rank). A model at a
   * given rank replaces one of the same scan: exact figures on show for that rank stay exact.
   */
  const installModel = (buf: ArrayBuffer, rank: number | { openingCap: number }) => {
    const model = new LowRankModel(buf);
    state.model = model;
    p.rank.enable();
    p.charts.show(model);
    p.panes.showModel();
    p.setLayerCount(model.maxRank);
    if (typeof rank === 'number') p.rank.set(rank, state.budget.kind === 'rank', true);
    else p.rank.set(opening.choose(model, rank.openingCap), true);
    p.rank.syncBudgetField();
    p.enableClean();
  };

  /**
   * A deeper factorisation, unless one at least as deep is already in (answers may cross). While the
   * opening choice is in force the view moves to the opening rank the deeper spectrum gives.
   */
  const installDeeper = (buf: ArrayBuffer, rank: number, openingCap: number) => {
    if ((state.model?.maxRank ?? 0) >= rank) return;
    const reopen = opening.inForce();
    installModel(buf, reopen ? { openingCap } : Number(p.rank.input.value));
    if (reopen) p.evaluator.schedule();
  };

  /** The file as the user gave it, for messages (an upload's own name, never a server path). */
  const given = (source: ScanSource, name?: string) =>
    name ?? (source.kind === 'path' ? source.path : source.kind === 'sample' ? source.name : 'the file');

  /**
   * Open a scan. Nothing on screen changes until the scan is read and its first factors are in: a file
   * that fails to open leaves the current scan (or stack) as it was, and says so in a message.
   */
  const open = async (source: ScanSource, name?: string) => {
    const seq = ++state.openSeq;
    const current = () => seq === state.openSeq;
    const openedAt = performance.now();
    const job = newJob();
    bar.busy(job, `Reading ${given(source, name)}…`, 'open');
    try {
      const scan = await api.openScan({ source });
      if (!current()) return;
      const openMs = performance.now() - openedAt;
      const minDim = Math.min(scan.width, scan.height);
      bar.busy(job, `Factorising ${scan.name}…`, 'factors');
      const first = await api.factors({
        scanId: scan.scanId,
        maxRank: Math.min(minDim, FIRST_PASS_RANK),
        job,
      });
      if (!current()) return;
      // The new scan is in: from here on the page shows it.
      p.leaveStack();
      state.openedAt = openedAt;
      state.firstPaintMs = undefined;
      delete body.dataset.firstPaintMs;
      delete body.dataset.initialRankMs;
      delete body.dataset.refined;
      body.dataset.openMs = openMs.toFixed(1);
      state.scan = scan;
      state.cleaned = undefined;
      state.preview = undefined;
      state.measured = [];
      state.showing = 'model';
      el.scanInfo.textContent = scanInfoText(scan);
      el.dropHint.hidden = true;
      body.dataset.factorsMs = (performance.now() - openedAt).toFixed(1);
      const k2 = Math.min(minDim, secondPassRank(scan.width * scan.height));
      const openingCap = Math.max(k2, Math.min(minDim, FIRST_PASS_RANK));
      installModel(first, { openingCap });
      bar.busy(undefined);
      bar.show(`Opened ${scan.name}. Refining the spectrum in the background…`);
      p.evaluator.schedule();
      if (k2 > FIRST_PASS_RANK) {
        // Asked for once the opening figures (or a budget typed meanwhile) are in: on 2 cores the deeper
        // factorisation beside an encode made the encode's exact figures up to 2× later.
        await p.evaluator.idle();
        if (!current()) return;
        const job2 = newJob();
        const more = await api.factors({ scanId: scan.scanId, maxRank: k2, job: job2, background: true });
        if (current()) {
          installDeeper(more, k2, openingCap);
          body.dataset.refined = scan.scanId;
          bar.show(`Spectrum to rank ${k2} ready.`);
        }
      } else bar.show(`Opened ${scan.name}.`);
      void p.refreshRecent();
    } catch (err) {
      if (!current()) return;
      bar.busy(undefined);
      bar.failOpen(given(source, name), err);
    }
  };

  const openChosen = (path: string) =>
    /\.rkf$/i.test(path) ? p.openStack(path) : open({ kind: 'path', path });

  const openPath = async (path: string) => {
    try {
      const r = await api.pick({ kind: 'file', suggested: path });
      if (r.path) await openChosen(r.path);
    } catch (err) {
      bar.failOpen(path, err);
    }
  };

  const uploadAndOpen = async (f: File) => {
    try {
      bar.busy(newJob(), `Uploading ${f.name}…`, 'open');
      const id = await api.upload(f.name, await f.arrayBuffer());
      await open({ kind: 'upload', uploadId: id }, f.name);
    } catch (err) {
      bar.busy(undefined);
      bar.failOpen(f.name, err);
    }
  };

  el.file.addEventListener('change', async () => {
    const f = el.file.files?.[0];
    if (f) await uploadAndOpen(f);
  });
  el.pathForm.addEventListener('submit', (e) => {
    e.preventDefault();
    const path = el.path.value.trim();
    if (path) void openPath(path);
  });
  api.onOpenPath((path) => void openChosen(path));

  return { open, openPath, openChosen, uploadAndOpen };
}
