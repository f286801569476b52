/**
 * The rank slider. A move rebuilds the reconstruction in the page, a few layers per animation frame
 * (./model.ts), shows instant figures and marks the charts; letting go asks the encoder for exact ones.
 * Timings land on <body> as data-first-paint-ms, data-last-step-ms and data-initial-rank-ms.
 */
import { bind } from './bind';
import type { Panes } from './panes';
import type { Readouts } from './readouts';
import type { SpectrumCharts } from './spectrum';
import type { PageState } from './state';
import type { CompareView } from './viewer';

/** Milliseconds of layer updates per animation frame, leaving the rest of a 60 Hz frame to paint. */
const STEP_MS_PER_FRAME = 10;

export interface RankSlider {
  readonly input: HTMLInputElement;
  /**
   * Move to rank k; a move by the user also makes the budget that rank. `keepExact`: the encoder's exact
   * figures on show stay (a deeper spectrum arrived, the file they describe did not change); otherwise the
   * figures become the instant estimates for k.
   */
  set(k: number, fromUser: boolean, keepExact?: boolean): void;
  /** Show the slider's rank in the budget field, unless the user is typing there. */
  syncBudgetField(): void;
  /** Enable the slider over every rank the open scan can take (up to the tile size in tiled mode). */
  enable(): void;
  disable(): void;
  /** Called when a whole-plane rank beyond the layers the page holds is asked for. */
  onBeyond?: (k: number) => void;
}

export function createRankSlider(
  state: PageState,
  view: CompareView,
  charts: SpectrumCharts,
  readouts: Readouts,
  panes: Panes,
  onRelease: () => void,
): RankSlider {
  const el = bind(document, { rank: 'input#rank', typed: 'input#rank-value', budget: 'input#budget' });
  const body = document.body;

  let animating = false;
  let stepStart = 0;
  const pump = () => {
    const m = state.model;
    if (!m) return;
    if (animating) return;
    animating = true;
    const frame = () => {
      if (m !== state.model) {
        animating = false;
        return pump();
      }
      const done = m.step(STEP_MS_PER_FRAME);
      view.paint();
      if (m.applied > 0 && state.firstPaintMs === undefined && state.openedAt) {
        // The first reconstruction is on screen (the spectrum was drawn before it).
        state.firstPaintMs = performance.now() - state.openedAt;
        body.dataset.firstPaintMs = state.firstPaintMs.toFixed(1);
      }
      if (done) {
        animating = false;
        const ms = performance.now() - stepStart;
        body.dataset.lastStepMs = ms.toFixed(2);
        body.dataset.appliedRank = String(m.applied);
        if (state.openedAt && body.dataset.initialRankMs === undefined)
          body.dataset.initialRankMs = (performance.now() - state.openedAt).toFixed(1);
        return;
      }
      requestAnimationFrame(frame);
    };
    // First chunk synchronously, so a one-layer step is painted within the input event's frame.
    frame();
  };

  const set = (k: number, fromUser: boolean, keepExact = false) => {
    const m = state.model;
    if (!m) return;
    stepStart = performance.now();
    // Rank 0 (a file of the wavelet residual layer alone) is shown when the encoder chose it, never asked
    // for: the slider reaches 0 only then, and a move by the user starts again from rank 1.
    k = Math.max(fromUser ? 1 : 0, Math.min(Math.round(k), Number(el.rank.max)));
    el.rank.min = k === 0 ? '0' : '1';
    el.typed.min = el.rank.min;
    el.rank.value = String(k);
    el.typed.value = String(k);
    if (fromUser) {
      state.budget = { kind: 'rank', rank: k };
      // The slider's rank is the budget now: no other budget's rank to mark, and no decoded file of
      // another budget to show (a whole-plane rank is rebuilt here from σ, U, V).
      state.budgetRank = undefined;
      if (!state.tiled) state.preview = undefined;
    }
    charts.mark(k, state.budgetRank);
    if (!state.tiled) {
      m.setTarget(k);
      pump();
      if (k > m.maxRank) api.onBeyond?.(k);
    }
    const shown = readouts.current();
    if (!(keepExact && shown?.exact && shown.values.rank === k)) readouts.estimate(k);
    panes.label();
  };

  const syncBudgetField = () => {
    if (document.activeElement !== el.budget) el.budget.value = `rank ${el.rank.value}`;
  };

  el.rank.addEventListener('input', () => {
    state.showing = 'model';
    set(Number(el.rank.value), true);
    syncBudgetField();
  });
  el.rank.addEventListener('change', () => onRelease());
  el.typed.addEventListener('change', () => {
    if (!state.model || !Number.isFinite(el.typed.valueAsNumber)) return;
    state.showing = 'model';
    set(el.typed.valueAsNumber, true);
    syncBudgetField();
    onRelease();
  });

  const api: RankSlider = {
    disable() {
      el.rank.disabled = true;
      el.typed.disabled = true;
    },
    input: el.rank,
    set,
    syncBudgetField,
    enable() {
      const s = state.scan;
      const max = String(state.tiled ? state.tile : s ? Math.min(s.width, s.height) : 1);
      for (const input of [el.rank, el.typed]) {
        input.disabled = false;
        input.min = '1';
        input.max = max;
      }
    },
  };
  return api;
}
