/**
 * The banding part of a clean report: what was detected on each axis (the strongest plane's figures) and
 * what was removed, with the combined strength √(rows² + columns²) and the period of the stronger removed axis.
 */
import type { BandingMode, BandingReport } from '../../contract';
import type { BandingAnalysis } from './banding';

/** The report for `mode` from the per-plane analyses; a profile list is non-null when that axis was removed. */
export function bandingReport(
  mode: BandingMode,
  analyses: BandingAnalysis[],
  rowProfiles: Float64Array[] | null,
  columnProfiles: Float64Array[] | null,
): BandingReport {
  if (mode === 'off' || analyses.length === 0)
    return { mode, direction: 'none', strength: 0, period: null, rows: null, columns: null };
  const axis = (key: 'rows' | 'columns', removed: boolean) => {
    const best = analyses.reduce((a, b) => (b[key].strength > a[key].strength ? b : a))[key];
    return {
      detected: analyses.some((a) => a[key].detected),
      removed,
      strength: best.strength,
      period: best.period,
      noiseFloor: best.noiseFloor,
      consistency: best.consistency,
    };
  };
  const rows = axis('rows', rowProfiles !== null);
  const columns = axis('columns', columnProfiles !== null);
  const direction =
    rows.removed && columns.removed ? 'both' : rows.removed ? 'rows' : columns.removed ? 'columns' : 'none';
  const strength = Math.sqrt(
    (rows.removed ? rows.strength ** 2 : 0) + (columns.removed ? columns.strength ** 2 : 0),
  );
  const period =
    rows.removed && columns.removed
      ? rows.strength >= columns.strength
        ? rows.period
        : columns.period
      : rows.removed
        ? rows.period
        : columns.removed
          ? columns.period
          : null;
  return { mode, direction, strength, period, rows, columns };
}
