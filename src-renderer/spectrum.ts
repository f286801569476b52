/**
 * Spectrum charts (uPlot): singular values on a log scale with cumulative energy, and the error curves
 * against rank (PSNR of the truncation, Frobenius optimum, spectral bound σ_{k+1}). The current rank and
 * the rank the budget implies are drawn as vertical marks.
 */
import uPlot from 'uplot';
import type { LowRankModel } from './model';

export const MARK_RANK = '#c4531d';
export const MARK_BUDGET = '#2f7d6d';

export class SpectrumCharts {
  private sigmaPlot?: uPlot;
  private errorPlot?: uPlot;
  rank = 0;
  budgetRank?: number;

  constructor(
    private readonly sigmaHost: HTMLElement,
    private readonly errorHost: HTMLElement,
  ) {
    new ResizeObserver(() => this.resize()).observe(sigmaHost);
  }

  private size(host: HTMLElement) {
    const r = host.getBoundingClientRect();
    return { width: Math.max(200, Math.floor(r.width)), height: Math.max(120, Math.floor(r.height) - 34) };
  }

  private resize() {
    if (this.sigmaPlot) this.sigmaPlot.setSize(this.size(this.sigmaHost));
    if (this.errorPlot) this.errorPlot.setSize(this.size(this.errorHost));
  }

  private marks() {
    return {
      draw: [
        (u: uPlot) => {
          const ctx = u.ctx;
          const draw = (k: number | undefined, colour: string, dash: number[]) => {
            if (k === undefined || k <= 0) return;
            const x = u.valToPos(k, 'x', true);
            ctx.save();
            ctx.strokeStyle = colour;
            ctx.lineWidth = 2 * devicePixelRatio;
            ctx.setLineDash(dash.map((d) => d * devicePixelRatio));
            ctx.beginPath();
            ctx.moveTo(x, u.bbox.top);
            ctx.lineTo(x, u.bbox.top + u.bbox.height);
            ctx.stroke();
            ctx.restore();
          };
          draw(this.budgetRank, MARK_BUDGET, [6, 4]);
          draw(this.rank, MARK_RANK, []);
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
    const axisStyle = {
      stroke: '#3b4656',
      grid: { stroke: 'rgba(29,42,58,0.08)' },
      ticks: { stroke: 'rgba(29,42,58,0.2)' },
    };
    this.sigmaPlot = new uPlot(
      {
        ...this.size(this.sigmaHost),
        title: 'Singular values and cumulative energy',
        scales: { x: { time: false }, s: { distr: 3 }, e: { range: [0, 100] } },
        axes: [
          { ...axisStyle, label: 'rank i' },
          { ...axisStyle, scale: 's', label: 'σᵢ (grey levels)' },
          { ...axisStyle, scale: 'e', side: 1, label: 'energy %', grid: { show: false } },
        ],
        series: [
          {},
          { label: 'σᵢ', scale: 's', stroke: '#1d2a3a', width: 1.5 },
          { label: 'cumulative energy %', scale: 'e', stroke: '#8a6d1f', width: 1.5, dash: [4, 3] },
        ],
        hooks: this.marks(),
        legend: { live: false },
      },
      [Array.from(ks), Array.from(sigma), Array.from(energy)],
      this.sigmaHost,
    );
    this.errorPlot = new uPlot(
      {
        ...this.size(this.errorHost),
        title: 'Error against rank (truncation, before quantisation)',
        scales: { x: { time: false }, db: {}, g: { distr: 3 } },
        axes: [
          { ...axisStyle, label: 'rank k' },
          { ...axisStyle, scale: 'db', label: 'PSNR dB' },
          { ...axisStyle, scale: 'g', side: 1, label: 'error (grey levels)', grid: { show: false } },
        ],
        series: [
          {},
          { label: 'PSNR', scale: 'db', stroke: '#2f5d8a', width: 1.5 },
          { label: 'Frobenius optimum', scale: 'g', stroke: '#7a3b69', width: 1.5 },
          { label: 'spectral σₖ₊₁', scale: 'g', stroke: '#8a6d1f', width: 1.5, dash: [4, 3] },
        ],
        hooks: this.marks(),
        legend: { live: false },
      },
      [Array.from(ks), Array.from(psnr), Array.from(frob), spec],
      this.errorHost,
    );
  }

  /**
   * Stack files: the frame-mode spectrum from the file header (singular values of the mean-removed frame
   * matrix per coded channel) with cumulative energy, and the energy left after i eigen-frames.
   * `stored` (eigen-frames kept in the file) is marked.
   */
  showFrameMode(spectrum: { channel: string; sigma: number[] }[], stored: number) {
    const K = Math.max(1, ...spectrum.map((s) => s.sigma.length));
    const ks = Array.from({ length: K }, (_, i) => i + 1);
    const axisStyle = {
      stroke: '#3b4656',
      grid: { stroke: 'rgba(29,42,58,0.08)' },
      ticks: { stroke: 'rgba(29,42,58,0.2)' },
    };
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
        title: 'Frame-mode singular values (eigen-frames) and cumulative energy',
        scales: { x: { time: false }, s: { distr: 3 }, e: { range: [0, 100] } },
        axes: [
          { ...axisStyle, label: 'eigen-frame i' },
          { ...axisStyle, scale: 's', label: 'σᵢ (grey levels)' },
          { ...axisStyle, scale: 'e', side: 1, label: 'energy %', grid: { show: false } },
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
            label: `cumulative energy % (${spectrum[0]?.channel ?? ''})`,
            scale: 'e',
            stroke: '#8a6d1f',
            width: 1.5,
            dash: [4, 3],
          },
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
      ],
      this.sigmaHost,
    );
    this.errorPlot = new uPlot(
      {
        ...this.size(this.errorHost),
        title: 'Energy left after i eigen-frames',
        scales: { x: { time: false }, r: { distr: 3 } },
        axes: [
          { ...axisStyle, label: 'eigen-frames i' },
          { ...axisStyle, scale: 'r', label: 'energy left %' },
        ],
        series: [
          {},
          ...spectrum.map((s, c) => ({
            label: s.channel,
            scale: 'r',
            stroke: colours[c % colours.length],
            width: 1.5,
          })),
        ],
        hooks: this.marks(),
        legend: { live: false },
      },
      [ks, ...cum.map((cs) => cs.map((f) => (f < 1 - 1e-12 ? 100 * (1 - f) : null)))],
      this.errorHost,
    );
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
  return new uPlot(
    {
      width: Math.max(220, Math.floor(r.width)),
      height: 170,
      title: 'Stripe profile of the removed part',
      legend: { live: false },
      scales: { x: { time: false } },
      axes: [{ label: 'column / row' }, { label: 'mean removed' }],
      series: [
        {},
        { label: 'per column', stroke: '#c4531d', width: 1 },
        { label: 'per row', stroke: '#2f7d6d', width: 1 },
      ],
    },
    [xs, pad(columns), pad(rows)],
    host,
  );
}
