/**
 * The Clean panel: sensor noise and banding settings, a run that shows the removed part first, buttons to
 * look at the cleaned scan, the removed part or the model again, the service's report and stripe profile.
 */

import uPlot from 'uplot';
import { type CleanSettings, decodeFactorSet } from '../src-main/contract';
import { bind } from './bind';
import { CLEANING_CAUTION } from './captions';
import { type CleanRow, cleanReportRows, noiseFitSeries } from './clean-report';
import type { Panes } from './panes';
import { axis, fitOnResize, profilePlot } from './spectrum';
import type { PageState, Showing } from './state';
import { newJob, type StatusBar } from './status';
import type { PageApi } from './transport';
import type { CompareView } from './viewer';

export interface CleanPanel {
  /** The settings as chosen in the panel. */
  settings(): CleanSettings;
  /** A scan is open: cleaning can run. */
  enableRun(): void;
}

export function setupCleanPanel(
  api: PageApi,
  state: PageState,
  bar: StatusBar,
  view: CompareView,
  panes: Panes,
): CleanPanel {
  const el = bind(document, {
    noise: 'select#clean-noise',
    sigma: 'input#clean-noise-sigma',
    banding: 'select#clean-banding',
    run: 'button#clean-run',
    report: '#clean-report',
    profile: '#clean-profile',
    caution: '#clean-caution',
    showCleaned: 'button#clean-show-cleaned',
    showRemoved: 'button#clean-show-removed',
    showModel: 'button#clean-show-model',
  });
  const views: [HTMLButtonElement, Showing][] = [
    [el.showCleaned, 'cleaned'],
    [el.showRemoved, 'removed'],
    [el.showModel, 'model'],
  ];
  el.caution.textContent = CLEANING_CAUTION;

  el.noise.addEventListener('change', () => {
    el.sigma.hidden = el.noise.value !== 'fixed';
  });

  const settings = (): CleanSettings => ({
    noise: el.noise.value === 'fixed' ? Number(el.sigma.value) : (el.noise.value as 'auto' | 'off'),
    banding: el.banding.value as CleanSettings['banding'],
  });

  el.run.addEventListener('click', async () => {
    const s = state.scan;
    if (!s) return bar.show('Open a scan first.', true);
    const job = newJob();
    bar.busy(job, 'Cleaning…');
    try {
      const r = await api.clean({ scanId: s.scanId, settings: settings(), job });
      const { header, arrays } = decodeFactorSet(await api.fetchImages(r.imagesId));
      const n = header.channels.length;
      const planes = (name: string) =>
        Array.from({ length: n }, (_, p) => arrays[`${name}.${p}`] as Float32Array);
      state.cleaned = { cleaned: planes('cleaned'), removed: planes('removed') };
      panes.forgetRemoved();
      state.showing = 'removed';
      el.report.replaceChildren(reportTable(cleanReportRows(r.report)));
      el.report.dataset.done = 'true';
      profilePlot(el.profile, r.profile.columns, r.profile.rows);
      noiseFitPlot(el.profile, r.report);
      for (const [b] of views) b.disabled = false;
      panes.showModel();
      panes.label();
      bar.show('Cleaned. Showing the removed part; compare it with the original before you save.');
    } catch (err) {
      bar.fail(err);
    } finally {
      bar.busy(undefined);
    }
  });

  for (const [b, what] of views)
    b.addEventListener('click', () => {
      state.showing = what;
      panes.label();
      view.paint();
    });

  return {
    settings,
    enableRun() {
      el.run.disabled = false;
    },
  };
}

/** The clean result as a two-column table: quantity (with its meaning as a tooltip) and value with unit. */
function reportTable(rows: CleanRow[]): HTMLTableElement {
  const table = document.createElement('table');
  table.className = 'quantities';
  table.createCaption().textContent = 'Cleaning result';
  for (const r of rows) {
    const tr = table.insertRow();
    const th = document.createElement('th');
    th.scope = 'row';
    th.textContent = r.name;
    th.title = r.help;
    tr.append(th);
    tr.insertCell().textContent = r.value;
  }
  return table;
}

/**
 * A small plot of the noise-model fit below the stripe profile: σ measured on each level set of the scan
 * (dots; hollow where the fit dropped it) and the fitted σ(x) = √(a·x + b) (line). Its host is made here,
 * once, after the profile's chart.
 */
function noiseFitPlot(after: HTMLElement, report: Record<string, unknown>): void {
  let host = document.getElementById('clean-noise-fit');
  if (!host) {
    host = document.createElement('div');
    host.id = 'clean-noise-fit';
    host.className = 'chart small';
    after.after(host);
  }
  host.replaceChildren();
  const s = noiseFitSeries(report);
  host.hidden = s === null;
  if (!s) return;
  const width = Math.max(220, Math.floor(host.getBoundingClientRect().width));
  const dots = (stroke: string, fill: string) => ({ show: true, size: 5, stroke, fill });
  const plot = new uPlot(
    {
      width,
      height: 170,
      title: s.title,
      legend: { live: false },
      scales: { x: { time: false } },
      axes: [axis({ label: 'brightness, grey levels' }), axis({ side: 3, label: 'noise σ, grey levels' })],
      series: [
        {},
        { label: 'measured', stroke: '#2f7d6d', width: 0, points: dots('#2f7d6d', '#2f7d6d') },
        { label: 'dropped by the fit', stroke: '#c4531d', width: 0, points: dots('#c4531d', 'transparent') },
        { label: 'model', stroke: '#222', width: 1.5, points: { show: false } },
      ],
    },
    [s.levels, s.measured, s.dropped, s.fitted],
    host,
  );
  fitOnResize(plot, host);
}
