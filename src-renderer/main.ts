/**
 * The page: open a scan, look at its spectrum, move the rank or set a budget, compare, clean, save and
 * run folders. Plain TypeScript modules; charts by uPlot. Talks to the back end only through the
 * contract (./transport.ts picks IPC or HTTP).
 *
 * This file only composes: what the page shows lives in ./state.ts, each card, panel and bar in its own
 * module, the DOM-free logic (budget text, number formats, captions, figures) in modules with unit tests.
 */
// First: makes navigator.language usable before the chart library reads it.
import './locale-guard';
import 'uplot/dist/uPlot.min.css';
import './styles.css';
import { setupBatchPanel } from './batch-panel';
import { bind } from './bind';
import { setupBudgetCard } from './budget-panel';
import { transportLabel } from './captions';
import { setupCleanPanel } from './clean-panel';
import { setupDrop } from './drop';
import { createEvaluator } from './evaluate';
import { setupMenu } from './menu';
import { createOpener } from './open';
import { createPanes } from './panes';
import { createRankSlider } from './rank';
import { createReadouts } from './readouts';
import { setupSavePanel } from './save-panel';
import { createScanLists } from './scan-lists';
import { SpectrumCharts } from './spectrum';
import { createStackCard } from './stack';
import { createState } from './state';
import { createStatusBar, watchProgress } from './status';
import { setupTabs } from './tabs';
import { setupToolbar } from './toolbar';
import { connect } from './transport';
import { CompareView } from './viewer';

const api = connect();
const state = createState();
const el = bind(document, {
  left: 'canvas#canvas-left',
  right: 'canvas#canvas-right',
  stage: '#stage',
  sigma: '#chart-sigma',
  error: '#chart-error',
  transport: '#transport',
});
const view = new CompareView(el.left, el.right, el.stage);
const charts = new SpectrumCharts(el.sigma, el.error);
el.transport.textContent = transportLabel(api.transport());

const bar = createStatusBar(api, state);
const readouts = createReadouts(state);
const panes = createPanes(state, view);
const rank = createRankSlider(state, view, charts, readouts, panes, () => evaluator.schedule());
const evaluator = createEvaluator(api, state, bar, readouts, rank, panes);
setupBudgetCard(state, charts, rank, evaluator, panes, bar);
const toolbar = setupToolbar(view, panes);
const selectTab = setupTabs();
const clean = setupCleanPanel(api, state, bar, view, panes);
const save = setupSavePanel(api, state, bar, clean.settings, readouts);
const batch = setupBatchPanel(api, state, bar, selectTab);
watchProgress(api, state, bar, batch.progress);

const lists = createScanLists(
  api,
  (name) => void opener.open({ kind: 'sample', name }),
  (path) => void opener.openPath(path),
);
const stack = createStackCard({
  api,
  state,
  bar,
  view,
  charts,
  readouts,
  panes,
  rank,
  refreshRecent: lists.refreshRecent,
});
const opener = createOpener({
  api,
  state,
  bar,
  charts,
  rank,
  panes,
  evaluator,
  setLayerCount: toolbar.setLayerCount,
  enableClean: clean.enableRun,
  leaveStack: stack.leave,
  openStack: stack.open,
  refreshRecent: lists.refreshRecent,
});
setupDrop(api, bar, opener, batch, selectTab);
setupMenu(api, bar, view, opener, batch, save, selectTab);

void lists.refreshSamples();
void lists.refreshRecent();
panes.label();
document.body.dataset.ready = 'true';
