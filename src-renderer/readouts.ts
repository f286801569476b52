/**
 * The "Figures" card: instant estimates from the spectrum while the slider moves, then the encoder's
 * exact figures; the card's data-state, data-rank and data-budget say which (tests and people read them).
 */
import type { CompressReport, StackFrameInfo } from '../src-main/contract';
import { bind, find } from './bind';
import { hasFrameQuality } from './captions';
import { estimateFigures, reportFigures, stackFigures } from './figures';
import {
  type Figures,
  METRIC_HELP,
  METRICS,
  readoutCell,
  type ShownFigures,
  type ShownReadout,
} from './format';
import type { PageState } from './state';

export interface Readouts {
  /** Show `values`, as exact figures or as estimates, for `rank` (undefined: no single rank). */
  set(values: Figures, exact: boolean, rank: number | undefined): void;
  /** Instant figures for rank k from the spectrum; sizes from the last real encode (or a first guess). */
  estimate(k: number): void;
  /** The encoder's figures. */
  showReport(r: CompressReport, rank: number | undefined): void;
  /** A stack frame's figures: what the file records, sizes of the whole stack. */
  showStack(info: StackFrameInfo, size: { width: number; height: number }): void;
  /** The figures on show, whether they are exact, and the budget they are for. */
  current(): ShownFigures | undefined;
  /** Call `cb` whenever the figures change. */
  onChange(cb: () => void): void;
}

export function createReadouts(state: PageState): Readouts {
  const el = bind(document, { box: 'dl#readouts', pill: '#readout-state' });
  const cells = bindReadouts(el.box, METRICS, 'The Figures card');
  for (const m of METRICS) cells[m].cell.title = METRIC_HELP[m];
  let shown: ShownFigures | undefined;
  const listeners: (() => void)[] = [];

  const set = (values: Figures, exact: boolean, rank: number | undefined) => {
    shown = { values, exact, budget: state.budget, tiled: state.tiled };
    for (const metric of METRICS) {
      writeReadout(cells[metric], readoutCell(metric, values[metric], exact));
    }
    el.box.dataset.state = exact ? 'exact' : 'estimate';
    el.box.dataset.rank = rank === undefined ? '' : String(rank);
    el.box.dataset.budget = JSON.stringify(state.budget);
    el.pill.textContent = exact ? 'encoded' : 'estimate';
    el.pill.classList.toggle('exact', exact);
    for (const cb of listeners) cb();
  };

  return {
    set,
    estimate(k) {
      const m = state.model;
      const s = state.scan;
      if (!m || !s) return;
      // Tiles: the whole-plane spectrum says nothing about tiled figures; wait for the encoder's.
      set(state.tiled ? { rank: k } : estimateFigures(m, s, state.measured, k), false, k);
    },
    showReport(r, rank) {
      // The page's spectrum is the whole plane's: it says nothing about a tiled base.
      set(reportFigures(r, state.tiled ? undefined : state.model), true, rank);
      if (shown) shown.residual = (r.layers?.residualBytes ?? 0) > 0;
    },
    showStack(info, size) {
      set(stackFigures(info, size), true, undefined);
      if (!hasFrameQuality(info))
        for (const m of ['psnr', 'ssim'] as const)
          writeReadout(cells[m], { value: '', text: 'not in file', exact: true });
      el.pill.textContent = 'stack file';
      shown = undefined;
    },
    current: () => shown,
    onChange: (cb) => void listeners.push(cb),
  };
}

/** One readout: the element carrying data-metric and data-value, and its <dd>. */
export interface ReadoutCell {
  cell: HTMLElement;
  dd: HTMLElement;
}

/** The readouts of `metrics` under `root`, each found by its data-metric. */
export function bindReadouts<M extends string>(
  root: ParentNode,
  metrics: readonly M[],
  where: string,
): Record<M, ReadoutCell> {
  const cells = {} as Record<M, ReadoutCell>;
  for (const m of metrics) {
    const cell = find(root, `[data-metric="${m}"]`, where);
    cells[m] = { cell, dd: find(cell, 'dd', `The ${m} readout`) };
  }
  return cells;
}

export function writeReadout(c: ReadoutCell, shown: ShownReadout): void {
  c.cell.dataset.value = shown.value;
  c.cell.dataset.exact = String(shown.exact);
  c.dd.textContent = shown.text;
}
