/**
 * Spectrum charts (uPlot): singular values on a log scale with cumulative energy, and the error curves
 * against rank (PSNR of the truncation, Frobenius optimum, spectral bound σₖ₊₁). The current rank and
 * the rank the budget implies are drawn as vertical marks and named in the legend. Axes take the room
 * their tick labels and titles need (./chart-axes.ts), so nothing overlaps at any window size.
 */
import uPlot from 'uplot';
import { axisRoom, compactTick, tickSpace } from './chart-axes';
import type { LowRankModel } from './model';

const MARK_RANK = '#c4531d';
const MARK_BUDGET = '#2f7d6d';
const AXIS_FONT = '11px system-ui, sans-serif';
const INK = '#3b4656';

let measurer: CanvasRenderingContext2D | null | undefined;
/** Width in CSS px of a tick label in the axis font. */
function textWidth(s: string): number {
  measurer ??= document.createElement('canvas').getContext('2d');
  if (!measurer) return 7 * s.length;
  measurer.font = AXIS_FONT;
  return measurer.measureText(s).width;
}

const isDecade = (v: number) => Math.abs(Math.log10(Math.abs(v)) % 1) < 1e-9;

const decades = (log?: boolean) =>
  log ? { filter: (_u: uPlot, splits: number[]) => splits.map((v) => (isDecade(v) ? v : null)) } : {};

/**
 * Tick labels: compact numbers; on a log scale (`logPx` > 0, the axis length in CSS px) decades only, and
 * every n-th decade when all of them would crowd (at least 14 px per label).
 */
function logLabels(splits: number[], logPx: number): string[] {
  if (logPx <= 0) return splits.map(compactTick);
  const count = splits.filter(isDecade).length;
  const step = Math.max(1, Math.ceil((count * 14) / Math.max(1, logPx)));
  const shown = (v: number) => isDecade(v) && ((Math.round(Math.log10(v)) % step) + step) % step === 0;
  return splits.map((v) => (shown(v) ? compactTick(v) : ''));
}

/** An axis with a titled unit, compact tick labels (decades only on a log scale) and room for both. */
/** Tick steps of a counting axis: 1, 2, 5 times powers of ten. */
const INTEGER_STEPS = [1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10_000, 20_000, 50_000];

export function axis(o: {
  scale?: string;
  label: string;
  side?: 1 | 3;
  log?: boolean;
  grid?: boolean;
}): uPlot.Axis {
  const vertical = o.side !== undefined;
  return {
    // uPlot fills in only missing keys: an explicit undefined side or scale would replace its defaults.
    ...(o.scale ? { scale: o.scale } : {}),
    ...(o.side ? { side: o.side } : {}),
    label: o.log ? `${o.label} (log)` : o.label,
    stroke: INK,
    font: AXIS_FONT,
    labelFont: `600 ${AXIS_FONT}`,
    labelSize: 16,
    labelGap: 2,
    gap: 4,
    // A log scale: grid lines and ticks at decades only (uPlot's minor splits crowd a small plot).
    grid: { show: o.grid ?? o.side !== 1, stroke: 'rgba(29,42,58,0.08)', ...decades(o.log) },
    ticks: { stroke: 'rgba(29,42,58,0.2)', size: 4, ...decades(o.log) },
    values: (u, splits) =>
      logLabels(splits, o.log ? (vertical ? u.bbox.height : u.bbox.width) / devicePixelRatio : 0),
    size: (_u, values) => axisRoom(values ?? [], textWidth, vertical),
    space: (_u, _i, _min, _max, dim) => tickSpace(dim, vertical),
    // The x axes count layers or eigen-frames: whole numbers only (never a tick at 1.5).
    ...(vertical ? {} : { incrs: INTEGER_STEPS }),
  };
}

/** Legend-only series naming the vertical marks (no data: the marks are drawn by a hook). */
function markSeries(rankLabel: string, budget: boolean): uPlot.Series[] {
  const rank = { label: rankLabel, stroke: MARK_RANK, width: 2 };
  return budget ? [rank, { label: 'budget’s rank', stroke: MARK_BUDGET, width: 3, dash: [6, 4] }] : [rank];
}

const nulls = (n: number) => Array.from({ length: n }, () => null);

/**
 * After each draw, where each axis puts its tick labels and its title (CSS px from the plot edge), on the
 * host's data-axis-boxes for tests: the labels must end before the title begins.
 */
function recordAxisBoxes(u: uPlot) {
  type Drawn = uPlot.Axis & { _size?: number; _values?: (string | null)[]; _show?: boolean };
  const boxes = (u.axes as Drawn[]).map((a, i) => {
    const labels = (a._values ?? []).filter((v): v is string => !!v);
    const across = a.side === 1 || a.side === 3 ? Math.max(0, ...labels.map(textWidth)) : 12;
    const ticks = (a.ticks?.size ?? 4) + (a.gap ?? 4);
    const titleStart = (a._size ?? 0) - (a.labelSize ?? 16);
    return { axis: i, title: a.label, labelsEnd: ticks + across, titleStart, labels };
  });
  const host = u.root.parentElement;
  if (host) host.dataset.axisBoxes = JSON.stringify(boxes);
}

/** Size a plot so that it, its title and its legend fill the host (no clipped axis or legend row). */
function fitPlot(plot: uPlot | undefined, host: HTMLElement): void {
  if (!plot) return;
  const around = [...plot.root.children].reduce(
    (h, c) => h + (c.classList.contains('u-wrap') ? 0 : (c as HTMLElement).offsetHeight),
    0,
  );
  const width = Math.max(120, Math.floor(host.clientWidth));
  const height = Math.max(80, Math.floor(host.clientHeight) - around - 2);
  if (plot.width !== width || plot.height !== height) plot.setSize({ width, height });
}

export class SpectrumCharts {
  private sigmaPlot?: uPlot;
  private errorPlot?: uPlot;
  rank = 0;
  budgetRank?: number;

  constructor(
    private readonly sigmaHost: HTMLElement,
    private readonly errorHost: HTMLElement,
  ) {
    // Fit now and a frame later: uPlot applies a new width on its next commit, and the legend re-wraps then.
    new ResizeObserver(() => this.fitSoon()).observe(sigmaHost);
  }

  /** A first size; {@link resize} then fits the plot, title and legend inside the host. */
  private size(host: HTMLElement) {
    const r = host.getBoundingClientRect();
    return { width: Math.max(120, Math.floor(r.width)), height: Math.max(80, Math.floor(r.height) - 40) };
  }

  private resize() {
    fitPlot(this.sigmaPlot, this.sigmaHost);
    fitPlot(this.errorPlot, this.errorHost);
  }

  /** Fit now and again after the first paint, once the legend and title have their final size. */
  private fitSoon() {
    this.resize();
    requestAnimationFrame(() => this.resize());
  }

  private marks() {
    return {
      draw: [
        recordAxisBoxes,
        (u: uPlot) => {
          const ctx = u.ctx;
          const draw = (k: number | undefined, colour: string, dash: number[], width: number) => {
            if (k === undefined || k <= 0) return;
            const x = u.valToPos(k, 'x', true);
            ctx.save();
            ctx.strokeStyle = colour;
            ctx.lineWidth = width * devicePixelRatio;
            ctx.setLineDash(dash.map((d) => d * devicePixelRatio));
            ctx.beginPath();
            ctx.moveTo(x, u.bbox.top);
            ctx.lineTo(x, u.bbox.top + u.bbox.height);
            ctx.stroke();
            ctx.restore();
          };
          // The budget's mark over the rank's, dashed, so both show where they meet.
          draw(this.rank, MARK_RANK, [], 2);
          draw(this.budgetRank, MARK_BUDGET, [6, 4], 3);
        },
      ],
    };
  }

  show(model: LowRankModel) {
    const K = model.maxRank;
    const ks = Float64Array.from({ length: K }, (_, i) => i + 1);
    const sigma = Float64Array.from({ length: K }, (_, i) => Math.max(1e-6, model.spectralBound(i)));
    const energy = Float64Array.from(ks, (k) => 100 * model.energyFraction(k));
    const psnr = Float64Array.from(ks, (k) => Math.min(120, model.psnrOptimal(k)));
    const frob = Float64Array.from(ks, (k) => Math.max(1e-6, model.frobeniusOptimal(k)));
    const spec = Array.from(ks, (k) => (k < K ? Math.max(1e-6, model.spectralBound(k)) : null));
    this.sigmaPlot?.destroy();
    this.errorPlot?.destroy();
    this.sigmaPlot = new uPlot(
      {
        ...this.size(this.sigmaHost),
        title: 'Singular values σᵢ and cumulative energy',
        scales: { x: { time: false }, s: { distr: 3 }, e: { range: [0, 100] } },
        axes: [
          axis({ label: 'rank i (layers)' }),
          axis({ scale: 's', side: 3, label: 'σᵢ, grey levels', log: true }),
          axis({ scale: 'e', side: 1, label: 'energy, %' }),
        ],
        series: [
          {},
          { label: 'σᵢ', scale: 's', stroke: '#1d2a3a', width: 1.5 },
          { label: 'cumulative energy %', scale: 'e', stroke: '#8a6d1f', width: 1.5, dash: [4, 3] },
          ...markSeries('rank shown', true).map((m) => ({ ...m, scale: 'e' })),
        ],
        hooks: this.marks(),
        legend: { live: false },
      },
      [Array.from(ks), Array.from(sigma), Array.from(energy), nulls(K), nulls(K)],
      this.sigmaHost,
    );
    this.errorPlot = new uPlot(
      {
        ...this.size(this.errorHost),
        title: 'Error against rank (truncation only)',
        scales: { x: { time: false }, db: {}, g: { distr: 3 } },
        axes: [
          axis({ label: 'rank k (layers)' }),
          axis({ scale: 'db', side: 3, label: 'PSNR, dB' }),
          axis({ scale: 'g', side: 1, label: 'grey levels', log: true }),
        ],
        series: [
          {},
          { label: 'PSNR', scale: 'db', stroke: '#2f5d8a', width: 1.5 },
          { label: 'best rank-k error', scale: 'g', stroke: '#7a3b69', width: 1.5 },
          { label: 'largest error σₖ₊₁', scale: 'g', stroke: '#8a6d1f', width: 1.5, dash: [4, 3] },
          ...markSeries('rank shown', true).map((m) => ({ ...m, scale: 'db' })),
        ],
        hooks: this.marks(),
        legend: { live: false },
      },
      [Array.from(ks), Array.from(psnr), Array.from(frob), spec, nulls(K), nulls(K)],
      this.errorHost,
    );
    this.fitSoon();
  }

  /**
   * Stack files: the frame-mode spectrum from the file header (singular values of the mean-removed frame
   * matrix per coded channel) with cumulative energy, and the energy left after i eigen-frames.
   * `stored` (eigen-frames kept in the file) is marked.
   */
  showFrameMode(spectrum: { channel: string; sigma: number[] }[], stored: number) {
    const K = Math.max(1, ...spectrum.map((s) => s.sigma.length));
    const ks = Array.from({ length: K }, (_, i) => i + 1);
    const colours = ['#1d2a3a', '#7a3b69', '#2f5d8a'];
    const cumulative = (sigma: number[]) => {
      const total = sigma.reduce((a, v) => a + v * v, 0) || 1;
      let run = 0;
      return ks.map((k) => {
        if (k <= sigma.length) run += sigma[k - 1] ** 2;
        return run / total;
      });
    };
    const cum = spectrum.map((s) => cumulative(s.sigma));
    this.sigmaPlot?.destroy();
    this.errorPlot?.destroy();
    this.rank = stored;
    this.budgetRank = undefined;
    this.sigmaPlot = new uPlot(
      {
        ...this.size(this.sigmaHost),
        title: 'Frame-mode singular values',
        scales: { x: { time: false }, s: { distr: 3 }, e: { range: [0, 100] } },
        axes: [
          axis({ label: 'eigen-frame i' }),
          axis({ scale: 's', side: 3, label: 'σᵢ, grey levels', log: true }),
          axis({ scale: 'e', side: 1, label: 'energy, %' }),
        ],
        series: [
          {},
          ...spectrum.map((s, c) => ({
            label: `σᵢ ${s.channel}`,
            scale: 's',
            stroke: colours[c % colours.length],
            width: 1.5,
          })),
          {
            label: `energy kept, % (${spectrum[0]?.channel ?? ''})`,
            scale: 'e',
            stroke: '#8a6d1f',
            width: 1.5,
            dash: [4, 3],
          },
          ...markSeries('eigen-frames stored', false).map((m) => ({ ...m, scale: 'e' })),
        ],
        hooks: this.marks(),
        legend: { live: false },
      },
      [
        ks,
        ...spectrum.map((s) =>
          ks.map((k) => (k <= s.sigma.length && s.sigma[k - 1] > 0 ? s.sigma[k - 1] : null)),
        ),
        (cum[0] ?? ks.map(() => 0)).map((f) => 100 * f),
        nulls(K),
      ],
      this.sigmaHost,
    );
    this.errorPlot = new uPlot(
      {
        ...this.size(this.errorHost),
        title: 'Energy left after i eigen-frames',
        scales: { x: { time: false }, r: { distr: 3 } },
        axes: [
          axis({ label: 'eigen-frames kept i' }),
          axis({ scale: 'r', side: 3, label: 'energy left, %', log: true }),
        ],
        series: [
          {},
          ...spectrum.map((s, c) => ({
            label: s.channel,
            scale: 'r',
            stroke: colours[c % colours.length],
            width: 1.5,
          })),
          ...markSeries('eigen-frames stored', false).map((m) => ({ ...m, scale: 'r' })),
        ],
        hooks: this.marks(),
        legend: { live: false },
      },
      [ks, ...cum.map((cs) => cs.map((f) => (f < 1 - 1e-12 ? 100 * (1 - f) : null))), nulls(K)],
      this.errorHost,
    );
    this.fitSoon();
  }

  mark(rank: number, budgetRank?: number) {
    this.rank = rank;
    this.budgetRank = budgetRank;
    this.sigmaPlot?.redraw(false, false);
    this.errorPlot?.redraw(false, false);
  }
}

/** A small line plot for the stripe profile of the removed part. */
export function profilePlot(host: HTMLElement, columns: number[], rows: number[]): uPlot {
  host.replaceChildren();
  const r = host.getBoundingClientRect();
  const n = Math.max(columns.length, rows.length);
  const xs = Array.from({ length: n }, (_, i) => i);
  const pad = (a: number[]) => Array.from({ length: n }, (_, i) => (i < a.length ? a[i] : null));
  const plot = new uPlot(
    {
      width: Math.max(220, Math.floor(r.width)),
      height: 170,
      title: 'Stripe profile of the removed part',
      legend: { live: false },
      scales: { x: { time: false } },
      axes: [axis({ label: 'column or row, px' }), axis({ side: 3, label: 'grey levels' })],
      series: [
        {},
        { label: 'mean removed per column', stroke: '#c4531d', width: 1 },
        { label: 'per row', stroke: '#2f7d6d', width: 1 },
      ],
    },
    [xs, pad(columns), pad(rows)],
    host,
  );
  fitOnResize(plot, host);
  return plot;
}

const fitters = new WeakMap<HTMLElement, ResizeObserver>();

/** Fit `plot` (title, legend and all) inside `host` now and whenever the host changes size. */
export function fitOnResize(plot: uPlot, host: HTMLElement): void {
  fitters.get(host)?.disconnect();
  // Again a frame later: uPlot applies a new width on its next commit, and the title and legend may re-wrap.
  const observer = new ResizeObserver(() => {
    fitPlot(plot, host);
    requestAnimationFrame(() => fitPlot(plot, host));
  });
  observer.observe(host);
  fitters.set(host, observer);
  fitPlot(plot, host);
}
