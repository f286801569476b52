/**
 * The Budget card below the slider: a typed budget (size, %, bpp, dB or rank) and whole planes or tiles.
 */
import { bind } from './bind';
import { parseBudgetField } from './budget-field';
import type { Evaluator } from './evaluate';
import type { Panes } from './panes';
import type { RankSlider } from './rank';
import type { SpectrumCharts } from './spectrum';
import type { PageState } from './state';
import type { StatusBar } from './status';

export function setupBudgetCard(
  state: PageState,
  charts: SpectrumCharts,
  rank: RankSlider,
  evaluator: Evaluator,
  panes: Panes,
  bar: StatusBar,
): void {
  const el = bind(document, {
    form: 'form#budget-form',
    budget: 'input#budget',
    tileSize: 'select#tile-size',
  });
  const slider = rank.input;

  el.form.addEventListener('submit', (e) => {
    e.preventDefault();
    if (!state.model) return bar.show('Open a scan first.', true);
    try {
      const b = parseBudgetField(el.budget.value);
      state.budget = b;
      if (b.kind === 'rank') {
        state.budgetRank = b.rank;
        rank.set(Math.min(b.rank, Number(slider.max)), false);
      } else if (b.kind === 'psnr') state.budgetRank = state.model.rankForPsnr(b.db);
      // The encoder's request goes out first; the estimate's mark on the charts is drawn while it runs.
      void evaluator.now();
      if (b.kind === 'psnr') charts.mark(Number(slider.value), state.budgetRank);
    } catch (err) {
      bar.fail(err);
    }
  });

  for (const r of document.querySelectorAll<HTMLInputElement>('input[name="tiling"]'))
    r.addEventListener('change', () => {
      state.tiled = r.value === 'tiled' && r.checked;
      state.preview = undefined;
      rank.enable();
      if (!state.tiled && state.model) rank.set(Number(slider.value), true);
      panes.label();
      evaluator.schedule();
    });

  el.tileSize.addEventListener('change', () => {
    state.tile = Number(el.tileSize.value);
    if (state.tiled) {
      rank.enable();
      evaluator.schedule();
    }
  });
}
