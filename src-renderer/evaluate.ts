/**
 * Exact figures from the encoder: an evaluation at the current budget, scheduled 120 ms after the last
 * change. A change during a run starts the new evaluation at once: the back end cancels the one it
 * supersedes (src-main/node/server/scan-jobs.ts), and answers to an older budget are dropped.
 */
import { decodeFactorSet } from '../src-main/contract';
import { bind } from './bind';
import { encodedStatus, evaluateLabel } from './captions';
import { addCalibration } from './figures';
import type { Panes } from './panes';
import type { RankSlider } from './rank';
import type { Readouts } from './readouts';
import type { PageState } from './state';
import { newJob, type StatusBar } from './status';
import type { PageApi } from './transport';

/** Quiet time after a change before the encoder runs, so a burst of changes costs one encode. */
const SETTLE_MS = 120;

export interface Evaluator {
  /** Evaluate once the changes settle. */
  schedule(): void;
  /** Evaluate now (superseding the evaluation running, if any). */
  now(): Promise<void>;
  /** Resolves once no evaluation is scheduled or running (at once if none is). */
  idle(): Promise<void>;
}

export function createEvaluator(
  api: PageApi,
  state: PageState,
  bar: StatusBar,
  readouts: Readouts,
  rank: RankSlider,
  panes: Panes,
): Evaluator {
  const stage = bind(document, { stage: '#stage' }).stage;
  let timer: ReturnType<typeof setTimeout> | undefined;
  let running = 0;
  let waiting: (() => void)[] = [];
  const wake = () => {
    if (timer || running) return;
    const w = waiting;
    waiting = [];
    for (const f of w) f();
  };

  const schedule = () => {
    if (timer) clearTimeout(timer);
    timer = setTimeout(() => {
      timer = undefined;
      void now();
    }, SETTLE_MS);
  };

  const now = async () => {
    const s = state.scan;
    if (!s) return;
    const seq = ++state.evalSeq;
    const budget = state.budget;
    const job = newJob();
    const search = budget.kind !== 'rank';
    bar.busy(job, evaluateLabel(budget, state.tiled ? state.tile : 0), search ? 'search' : 'evaluate');
    running++;
    try {
      const r = await api.evaluate({ scanId: s.scanId, budget, tile: state.tiled ? state.tile : 0, job });
      if (seq !== state.evalSeq || JSON.stringify(budget) !== JSON.stringify(state.budget)) return;
      const ranks = r.report.ranks;
      const k = ranks[0]?.rank ?? ranks[0]?.tiles?.max;
      // Tiles, or a wavelet residual layer: the page cannot rebuild that file from σ, U, V, so it shows the
      // encoder's own decoded file (integer samples), fetched before the figures turn exact.
      if (r.previewId) {
        const { arrays, header } = decodeFactorSet(await api.fetchImages(r.previewId));
        if (seq !== state.evalSeq) return;
        state.preview = {
          planes: header.channels.map((_, p) => Float32Array.from(arrays[`rec.${p}`])),
          tiles: r.tileRanks,
          residual: (r.report.layers?.residualBytes ?? 0) > 0,
        };
      } else state.preview = undefined;
      stage.dataset.tiles = String(r.tileRanks?.[0]?.ranks.length ?? '');
      // A rank budget on whole planes: a measured size for the instant estimates (other budgets may
      // quantise differently, so their sizes say nothing about the slider's).
      if (budget.kind === 'rank' && !state.tiled && k !== undefined && ranks.every((c) => c.rank === k))
        state.measured = addCalibration(state.measured, { rank: k, bytes: r.report.outputBytes });
      if (budget.kind === 'rank') readouts.showReport(r.report, budget.rank);
      else {
        state.budgetRank = k;
        // The slider follows the budget to the rank the encoder chose, then the figures turn exact.
        if (k !== undefined) rank.set(k, false);
        readouts.showReport(r.report, k);
      }
      panes.showModel();
      bar.show(encodedStatus(r.report));
    } catch (err) {
      if (seq === state.evalSeq && s === state.scan) bar.fail(err);
    } finally {
      // A superseded run leaves the bar to the run that replaced it.
      if (seq === state.evalSeq) bar.busy(undefined);
      running--;
      wake();
    }
  };

  const idle = () =>
    new Promise<void>((resolve) => {
      waiting.push(resolve);
      wake();
    });

  return { schedule, now, idle };
}
