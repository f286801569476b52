/** Row bands for the workers, and the merge of their statistics. */
import type { GroupStats } from './patch-groups';

/** Statistics of a whole denoise: the band statistics (patch-groups.ts `GroupStats`) summed over bands. */
export type DenoiseStats = GroupStats;

/** Merge band statistics. Groups near a band edge are counted by both bands; the summary is indicative. */
export function mergeStats(parts: GroupStats[]): DenoiseStats {
  const out: DenoiseStats = {
    groups: 0,
    rankSum: 0,
    rankMin: Number.POSITIVE_INFINITY,
    rankMax: 0,
    exact: 0,
  };
  for (const s of parts) {
    out.groups += s.groups;
    out.rankSum += s.rankSum;
    out.rankMin = Math.min(out.rankMin, s.rankMin);
    out.rankMax = Math.max(out.rankMax, s.rankMax);
    out.exact += s.exact;
  }
  if (!Number.isFinite(out.rankMin)) out.rankMin = 0;
  return out;
}

/** Split rows into `count` bands of near-equal height. */
export function rowBands(height: number, count: number): Array<[number, number]> {
  const n = Math.max(1, Math.min(count, height));
  const out: Array<[number, number]> = [];
  for (let i = 0; i < n; i++) out.push([Math.floor((i * height) / n), Math.floor(((i + 1) * height) / n)]);
  return out;
}
