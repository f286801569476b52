/**
 * What a run and a merge both say about their rows: one summary, counted by one rule, so a merged summary
 * adds up to its shards' summaries; and where the CSV and the HTML report sit beside a manifest.
 */
import type { BatchRow, BatchSummary } from '../../contract';

/** A batch's output files: the manifest, and the CSV and report beside it unless the report is given. */
export interface BatchFiles {
  manifest: string;
  csv: string;
  report: string;
}

export function batchFiles(manifest: string, report?: string): BatchFiles {
  const stem = manifest.replace(/\.jsonl?$/i, '');
  return { manifest, csv: `${stem}.csv`, report: report ?? `${stem}.html` };
}

/**
 * The summary of `rows`. `total` is the number of entries the run planned (a run that was interrupted has
 * fewer rows than that); a merge has one row per entry. Megapixels count the files that have an output (ok
 * and kept), as the output bytes do; failures are listed by path.
 */
export function batchSummary(rows: BatchRow[], total: number, elapsedMs: number): BatchSummary {
  const count = (status: BatchRow['status']) => rows.filter((r) => r.status === status).length;
  const hasOutput = (r: BatchRow) => r.status === 'ok' || r.status === 'kept';
  return {
    total,
    ok: count('ok'),
    kept: count('kept'),
    failed: count('failed'),
    planned: count('planned'),
    skipped: count('skipped'),
    inputBytes: rows.reduce((s, r) => s + (r.inputBytes ?? 0), 0),
    outputBytes: rows.reduce((s, r) => s + (r.status === 'failed' ? 0 : (r.bytes ?? 0)), 0),
    megapixels: rows.reduce(
      (s, r) => s + (hasOutput(r) && r.width && r.height ? (r.width * r.height) / 1e6 : 0),
      0,
    ),
    elapsedMs,
    failures: rows
      .filter((r) => r.status === 'failed')
      .map((r) => r.path)
      .sort(),
  };
}
