/**
 * The rank a scan opens at (./figures.ts `openingRank`) and the sentence under the slider that says why.
 * The choice stays in force until the user moves the slider, types a rank or applies a budget; a deeper
 * factorisation that arrives before then moves the view to the rank the floor asks for.
 */
import { bind } from './bind';
import { type OpeningChoice, openingRank, openingText } from './figures';
import type { LowRankModel } from './model';

export interface OpeningNote {
  /** Choose the opening rank on `model` (holding layers up to `cap`), show why, and return the rank. */
  choose(model: LowRankModel, cap: number): number;
  /** Whether the opening choice is still in force (no user change since). */
  inForce(): boolean;
}

export function createOpeningNote(): OpeningNote {
  const el = bind(document, {
    note: '#rank-why',
    rank: 'input#rank',
    typed: 'input#rank-value',
    form: 'form#budget-form',
  });
  let choice: OpeningChoice | undefined;
  const drop = () => {
    choice = undefined;
    el.note.hidden = true;
    delete document.body.dataset.openingRank;
  };
  el.rank.addEventListener('input', drop);
  el.typed.addEventListener('change', drop);
  el.form.addEventListener('submit', drop);
  return {
    choose(model, cap) {
      choice = openingRank(model, cap);
      el.note.textContent = openingText(choice);
      el.note.hidden = false;
      document.body.dataset.openingRank = String(choice.rank);
      document.body.dataset.openingWhy = choice.why;
      return choice.rank;
    },
    inForce: () => choice !== undefined,
  };
}
