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
