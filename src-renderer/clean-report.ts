/**
 * The Clean panel's result as a small table of named quantities with units, from the cleaning service's
 * report (src-main/contract/clean.ts CleanReport). No DOM: the panel builds the table from these rows.
 */

export interface CleanRow {
  /** What the quantity is, in plain words. */
  name: string;
  /** Its value with its unit. */
  value: string;
  /** What it means for the scan (the row's tooltip). */
  help: string;
}

const num = (v: unknown): number | undefined => (typeof v === 'number' && Number.isFinite(v) ? v : undefined);
const fixed = (v: number, d: number) => v.toFixed(d);

/** The rows shown for a cleaning report; fields the report lacks are left out. */
export function cleanReportRows(r: Record<string, unknown>): CleanRow[] {
  const rows: CleanRow[] = [];
  const sigma = num(r.noiseSigma);
  const source = r.noiseSource;
  if (typeof r.noiseSkipped === 'string')
    rows.push({
      name: 'Noise removal',
      value: `skipped: ${r.noiseSkipped}`,
      help: 'Why noise was not removed.',
    });
  else if (sigma !== undefined)
    rows.push({
      name: 'Noise level',
      value: `${fixed(sigma, 2)} grey levels${source === 'estimated' ? ' (estimated)' : source === 'given' ? ' (as set)' : ''}`,
      help: 'Standard deviation σ of the sensor noise, in grey levels of the scan: what the cleaning treats as noise.',
    });
  else if (source === 'off')
    rows.push({ name: 'Noise removal', value: 'off', help: 'Noise was left as it is.' });
  const model = r.noiseModel as
    | { model?: string; a?: number; b?: number; source?: string; bNote?: string }
    | null
    | undefined;
  if (model && num(model.a) !== undefined && num(model.b) !== undefined)
    rows.push({
      name: 'Noise model',
      value: `σ² = ${fixed(model.a as number, 3)}·x + ${fixed(model.b as number, 2)}${model.source === 'given' ? ' (as set)' : ' (fitted)'}; ${model.model === 'poisson-gaussian' ? 'grows with brightness' : 'the same at every brightness'}`,
      help: 'How the noise variance depends on the brightness x (grey levels). When it grows with brightness, the scan is cleaned in a scale where the noise is even (generalized Anscombe transform).',
    });
  if (model && typeof model.bNote === 'string')
    rows.push({
      name: 'Noise in black (b)',
      value: model.bNote,
      help: 'b is the noise variance at brightness 0. When the scan has no flat dark areas it is read off the line far from where it was measured, and is uncertain.',
    });
  const threshold = num(r.threshold);
  if (threshold !== undefined)
    rows.push({
      name: 'Noise threshold',
      value: `${fixed(threshold, 1)} grey levels`,
      help: 'Layers weaker than this (in a typical group of patches) are treated as noise and removed.',
    });
  if (typeof r.method === 'string' && r.method !== 'off')
    rows.push({
      name: 'Method',
      value: r.method === 'groups' ? 'groups of similar patches' : r.method === 'tiles' ? 'tiles' : r.method,
      help: 'How the scan was split before the weak layers were removed.',
    });
  const removed = num(r.removedRms);
  if (removed !== undefined)
    rows.push({
      name: 'Removed, RMS',
      value: `${fixed(removed, 2)} grey levels`,
      help: 'Root-mean-square size of what was taken out, per sample, in grey levels.',
    });
  if ('psnrChange' in r)
    rows.push({
      name: 'Cleaned vs original',
      value:
        num(r.psnrChange) === undefined ? 'identical' : `${fixed(num(r.psnrChange) as number, 2)} dB PSNR`,
      help: 'How close the cleaned scan is to the original, in dB (higher = smaller change).',
    });
  const changed = num(r.changedSamples);
  if (changed !== undefined) {
    const total = (num(r.width) ?? 0) * (num(r.height) ?? 0) * (num(r.channels) ?? 0);
    rows.push({
      name: 'Samples changed',
      value: `${changed.toLocaleString('en-US')}${total > 0 ? ` of ${total.toLocaleString('en-US')} (${fixed((100 * changed) / total, 1)} %)` : ''}`,
      help: 'How many pixel values (per channel) the cleaning changed.',
    });
  }
  return rows;
}

/** The noise-model fit as plot data: level sets sorted by level, σ measured there and σ of the model. */
export interface NoiseFitSeries {
  /** What the plot's title says: the model and its a, b. */
  title: string;
  levels: number[];
  measured: number[];
  /** Measured σ of level sets the fit dropped (null where kept): drawn apart so a reader sees them. */
  dropped: (number | null)[];
  fitted: number[];
}

/** Plot data for the first plane of the report's noise model; null when there is no fitted model. */
export function noiseFitSeries(r: Record<string, unknown>): NoiseFitSeries | null {
  const m = r.noiseModel as
    | {
        model: string;
        a: number;
        b: number;
        planes: {
          plane: string;
          a: number;
          b: number;
          points: { level: number; sigma: number; used: boolean }[];
        }[];
      }
    | null
    | undefined;
  const plane = m?.planes[0];
  if (!m || !plane || plane.points.length === 0) return null;
  const pts = [...plane.points].sort((p, q) => p.level - q.level);
  const name = m.model === 'poisson-gaussian' ? 'grows with brightness' : 'the same at every brightness';
  return {
    title: `Noise model (${plane.plane}): σ² = ${fixed(plane.a, 3)}·x + ${fixed(plane.b, 2)}, used as ${name}`,
    levels: pts.map((p) => p.level),
    measured: pts.map((p) => p.sigma),
    dropped: pts.map((p) => (p.used ? null : p.sigma)),
    fitted: pts.map((p) => Math.sqrt(Math.max(0, plane.a * p.level + plane.b))),
  };
}
