/**
 * How the page writes numbers: byte counts and the readouts in the "Figures" card. No DOM: the page's
 * readout cells take the `{ value, text }` computed here.
 */
import type { Budget } from '../src-main/contract';

/** Byte counts in decimal units (1 kB = 1000 B): two decimals from MB up, one for kB, whole bytes below. */
export function formatBytes(b: number): string {
  if (b >= 1e9) return `${(b / 1e9).toFixed(2)} GB`;
  if (b >= 1e6) return `${(b / 1e6).toFixed(2)} MB`;
  if (b >= 1e3) return `${(b / 1e3).toFixed(1)} kB`;
  return `${Math.round(b)} B`;
}

/** The readouts of the Figures card, by their `data-metric` in index.html. */
export const METRICS = [
  'rank',
  'psnr',
  'ssim',
  'ratio',
  'bytes',
  'bpp',
  'spectral-bound',
  'frobenius-optimal',
  'frobenius',
] as const;
export type Metric = (typeof METRICS)[number];

/** Values for some readouts; the others are left as they are (estimates) or cleared (exact figures). */
export type Figures = Partial<Record<Metric, number>>;

/** The figures on show, whether they are exact, and the budget they are for (./readouts.ts). */
export interface ShownFigures {
  values: Figures;
  exact: boolean;
  budget: Budget;
  tiled: boolean;
  /** The encoder's file holds a wavelet residual layer on top of its base (exact figures only). */
  residual?: boolean;
}

const READOUT_FORMAT: Record<Metric, (v: number) => string> = {
  rank: (v) => (Number.isInteger(v) ? String(v) : `${v.toFixed(1)} (mean)`),
  psnr: formatPsnr,
  ssim: (v) => v.toFixed(4),
  ratio: (v) => `${v.toFixed(1)} : 1`,
  bytes: formatBytes,
  bpp: (v) => v.toFixed(3),
  'spectral-bound': (v) => v.toFixed(2),
  'frobenius-optimal': (v) => v.toFixed(1),
  frobenius: (v) => v.toFixed(1),
};

/** What each readout means for a scan, and its unit: the tooltip (title) of its cell. */
export const METRIC_HELP: Record<Metric, string> = {
  rank: 'Rank: how many layers (singular triplets σᵢuᵢvᵢᵀ) of each plane the figures are for; in tiles, the mean over tiles.',
  psnr: 'PSNR, in dB: peak signal-to-noise ratio of the shown result against the original scan. Higher is closer; above about 40 dB differences are hard to see.',
  ssim: 'SSIM, no unit (0 to 1): structural similarity of the shown result to the original; 1 means identical.',
  ratio:
    'Storage ratio: the raw pixel data divided by the compressed file size (higher means a smaller file).',
  bytes: 'Size of the compressed .rkf file, in bytes (1 kB = 1000 B).',
  bpp: 'Bits per pixel: 8 × file size ÷ (width × height).',
  'spectral-bound':
    'Largest error in any direction, σₖ₊₁ (the first singular value left out), in grey levels: the Eckart–Young spectral-norm bound of the truncation.',
  'frobenius-optimal':
    'Best rank-k error: the least total error any rank-k approximation can have, √(sum of σᵢ² left out) (Eckart–Young), in grey levels summed over all pixels (Frobenius norm). Divide by √(pixels) for the RMS per pixel. It bounds the low-rank base alone: a residual layer on top codes what the base leaves out, so the file can come closer than this.',
  frobenius:
    'Total error of the decoded file against the original (truncation, quantisation and, when the file has one, what the residual layer leaves), in grey levels summed over all pixels (Frobenius norm). Without a residual layer it is at least the best rank-k error.',
};

/** PSNR in dB with two decimals; a lossless result (infinite PSNR) reads "∞ dB". */
export function formatPsnr(db: number): string {
  return Number.isFinite(db) ? `${db.toFixed(2)} dB` : '∞ dB';
}

/** One readout as shown: data-value, the <dd> text, and data-exact. */
export interface ShownReadout {
  value: string;
  text: string;
  exact: boolean;
}

/**
 * What one readout cell shows: `value` for its data-value attribute, `text` for its <dd>, `exact` for
 * data-exact. A missing value reads '–' (an estimate never leaves an older exact figure in place);
 * estimates read "≈ …".
 */
export function readoutCell(metric: Metric, v: number | undefined | null, exact: boolean): ShownReadout {
  // null: a figure the report has none of (σₖ₊₁ of a file without a base layer arrives as JSON null).
  if (v === undefined || v === null || Number.isNaN(v)) return { value: '', text: '–', exact };
  return {
    value: String(v),
    text: (exact || metric === 'rank' ? '' : '≈ ') + READOUT_FORMAT[metric](v),
    exact,
  };
}
