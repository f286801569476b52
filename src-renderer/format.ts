/**
 * How the page writes numbers: byte counts and the readouts in the "Figures" card. No DOM: the page's
 * readout cells take the `{ value, text }` computed here.
 */

/** Byte counts in decimal units (1 kB = 1000 B): two decimals from MB up, one for kB, whole bytes below. */
export function formatBytes(b: number): string {
  if (b >= 1e9) return `${(b / 1e9).toFixed(2)} GB`;
  if (b >= 1e6) return `${(b / 1e6).toFixed(2)} MB`;
  if (b >= 1e3) return `${(b / 1e3).toFixed(1)} kB`;
  return `${Math.round(b)} B`;
}

/** The readouts of the Figures card, by their `data-metric` in index.html. */
export const METRICS = [
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

const READOUT_FORMAT: Record<Metric, (v: number) => string> = {
  psnr: formatPsnr,
  ssim: (v) => v.toFixed(4),
  ratio: (v) => `${v.toFixed(1)} : 1`,
  bytes: formatBytes,
  bpp: (v) => v.toFixed(3),
  'spectral-bound': (v) => v.toFixed(2),
  'frobenius-optimal': (v) => v.toFixed(1),
  frobenius: (v) => v.toFixed(1),
};

/** PSNR in dB with two decimals; a lossless result (infinite PSNR) reads "∞ dB". */
export function formatPsnr(db: number): string {
  return Number.isFinite(db) ? `${db.toFixed(2)} dB` : '∞ dB';
}

/**
 * What one readout cell shows: `value` for its data-value attribute, `text` for its <dd>. A missing value
 * clears an exact readout ('–') and leaves an estimate untouched (undefined); estimates read "≈ …".
 */
export function readoutCell(
  metric: Metric,
  v: number | undefined,
  exact: boolean,
): { value: string; text: string } | undefined {
  if (v === undefined || Number.isNaN(v)) return exact ? { value: '', text: '–' } : undefined;
  return { value: String(v), text: (exact ? '' : '≈ ') + READOUT_FORMAT[metric](v) };
}
