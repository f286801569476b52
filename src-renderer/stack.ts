/**
 * Stack files: a frame slider over one .rkf with the stack layout. The back end decodes the frame the
 * slider asks for; slider moves during a fetch coalesce into one more fetch. The Stack card shows what the
 * file records about the frame and the stack.
 */
import { decodeFactorSet } from '../src-main/contract';
import { bind } from './bind';
import {
  frameLabels,
  noOriginalText,
  STACK_METRICS,
  stackCardCells,
  stackInfoText,
  stackNote,
  stackOpenedStatus,
} from './captions';
import type { Panes } from './panes';
import type { RankSlider } from './rank';
import { bindReadouts, type Readouts, writeReadout } from './readouts';
import type { SpectrumCharts } from './spectrum';
import type { PageState } from './state';
import { newJob, type StatusBar } from './status';
import type { PageApi } from './transport';
import type { CompareView } from './viewer';

export interface StackCard {
  /** Close the stack view (a scan is opening). */
  leave(): void;
  open(path: string): Promise<void>;
}

export interface StackParts {
  api: PageApi;
  state: PageState;
  bar: StatusBar;
  view: CompareView;
  charts: SpectrumCharts;
  readouts: Readouts;
  panes: Panes;
  rank: RankSlider;
  refreshRecent(): Promise<void>;
}

export function createStackCard(p: StackParts): StackCard {
  const { api, state, bar } = p;
  const stack = state.stack;
  const el = bind(document, {
    card: '#stack-card',
    frame: 'input#frame',
    frameOut: '#frame-out',
    note: '#stack-note',
    dropHint: '#drop-hint',
    scanInfo: '#scan-info',
    originalsForm: 'form#originals-form',
    originalsPath: 'input#originals-path',
    originalsNote: '#originals-note',
    budgetCard: '#budget-card',
  });
  const cells = bindReadouts(el.card, STACK_METRICS, 'The Stack card');
  const body = document.body;

  const leave = () => {
    stack.path = undefined;
    stack.info = undefined;
    stack.originals = undefined;
    el.originalsNote.textContent = '';
    stack.seq++;
    el.card.hidden = true;
    // The rank and budget are a scan's; a stack's eigen-frames were chosen when it was written.
    el.budgetCard.hidden = false;
    el.frame.disabled = true;
    delete body.dataset.stackFrame;
  };

  const showFrame = (buf: ArrayBuffer) => {
    const { header, arrays } = decodeFactorSet(buf);
    const info = header.stack;
    if (!info) throw new Error('the back end sent no stack summary');
    const first = !stack.info;
    stack.info = info;
    const decoded = header.channels.map((_, c) => arrays[`src.${c}`] as Uint8Array | Uint16Array);
    const recon = decoded.map((a) => Float32Array.from(a));
    // The original frame, when the back end found it in the folder the user gave; else the pane says why.
    const noOriginal = noOriginalText(info);
    const original = noOriginal
      ? decoded
      : header.channels.map((_, c) => arrays[`orig.${c}`] as Uint8Array | Uint16Array);
    p.view.setSource({
      width: header.width,
      height: header.height,
      peak: header.peak,
      original,
      noOriginal,
      recon: () => recon,
    });
    el.originalsNote.textContent = info.original ? `Frame ${info.frame + 1}: ${info.original.note}` : '';
    body.dataset.stackOriginal = info.original ? String(info.original.shown) : 'none';
    const labels = frameLabels(info);
    p.panes.label();
    el.frameOut.textContent = labels.position;
    el.frame.value = String(info.frame + 1);
    const shown = stackCardCells(info);
    for (const m of STACK_METRICS) writeReadout(cells[m], shown[m]);
    // Sizes are the whole stack's: the eigen-frames are shared by every frame.
    p.readouts.showStack(info, header);
    el.note.textContent = stackNote(info);
    body.dataset.stackFrame = String(info.frame);
    if (first) {
      el.card.hidden = false;
      el.dropHint.hidden = true;
      el.frame.min = '1';
      el.frame.max = String(info.frameCount);
      el.frame.disabled = false;
      p.charts.showFrameMode(info.spectrum, Math.max(...info.ranks));
      el.scanInfo.textContent = stackInfoText(info, {
        width: header.width,
        height: header.height,
        channels: header.channels.length,
      });
      bar.show(stackOpenedStatus(info));
      void p.refreshRecent();
    }
  };

  /** Fetch the frame the slider asks for until it stops moving. */
  const loadFrame = async (seq: number) => {
    if (stack.loading === seq || !stack.path) return;
    stack.loading = seq;
    try {
      while (seq === stack.seq) {
        const want = stack.want;
        const buf = await api.stackFrame({ path: stack.path, frame: want, originals: stack.originals });
        if (seq !== stack.seq) return;
        showFrame(buf);
        if (stack.want === want) break;
      }
      bar.busy(undefined);
    } catch (err) {
      bar.busy(undefined);
      if (seq === stack.seq) bar.fail(err);
    } finally {
      if (stack.loading === seq) stack.loading = undefined;
    }
  };

  // The folder of the original frames: chosen once (the back end then reads the frame files in it), then
  // every frame fetched comes with its original.
  el.originalsForm.addEventListener('submit', (ev) => {
    ev.preventDefault();
    const typed = el.originalsPath.value.trim();
    if (!typed || !stack.path) return;
    void (async () => {
      try {
        // A folder, or the multi-page TIFF the stack was made from.
        const chosen = await api
          .pick({ kind: 'folder', suggested: typed })
          .catch(() => api.pick({ kind: 'file', suggested: typed }));
        if (!chosen.path) return;
        stack.originals = typed;
        stack.want = stack.info?.frame ?? 0;
        stack.loading = undefined;
        await loadFrame(stack.seq);
      } catch (err) {
        bar.failOpen(typed, err);
      }
    })();
  });

  el.frame.addEventListener('input', () => {
    stack.want = Number(el.frame.value) - 1;
    el.frameOut.textContent = `${el.frame.value} / ${el.frame.max}`;
    void loadFrame(stack.seq);
  });

  return {
    leave,
    async open(path) {
      const seq = ++state.openSeq; // a scan still opening must not take over the view
      const job = newJob();
      bar.busy(job, 'Reading the stack…', 'stack');
      // The first frame before anything changes: a file that fails to open leaves the current view as it was.
      let buf: ArrayBuffer;
      try {
        buf = await api.stackFrame({ path, frame: 0 });
      } catch (err) {
        if (seq !== state.openSeq) return;
        bar.busy(undefined);
        return bar.failOpen(path, err);
      }
      if (seq !== state.openSeq) return;
      leave();
      el.budgetCard.hidden = true;
      state.model = undefined;
      state.scan = undefined;
      state.cleaned = undefined;
      state.preview = undefined;
      state.showing = 'model';
      p.rank.disable();
      stack.path = path;
      stack.want = 0;
      try {
        showFrame(buf);
      } catch (err) {
        bar.fail(err);
      }
      bar.busy(undefined);
    },
  };
}
