/**
 * `rankfold batch --merge MANIFEST…`: join shard manifests into one manifest, CSV and report, and check
 * that they fit together: one shard count, every row in the shard its path hashes to, no path twice.
 */
import { dirname, join, resolve } from 'node:path';
import { type BatchRow, type BatchSummary, parseShardText, UsageError } from '../../contract';
import { writeFileAtomic } from '../io/atomic';
import { MANIFEST_NAME, readManifest, rowsToCsv, sortRows, writeManifest } from './manifest';
import { shardOf } from './plan';
import { writeReport } from './report';
import { batchFiles, batchSummary } from './summary';

export interface MergeResult {
  rows: BatchRow[];
  summary: BatchSummary;
  warnings: string[];
}

/** Join rows of several manifests. Pure apart from reading; exported for tests. */
export function joinRows(sets: { file: string; rows: BatchRow[] }[]): {
  rows: BatchRow[];
  warnings: string[];
  shards: string[];
} {
  const warnings: string[] = [];
  const byPath = new Map<string, { row: BatchRow; file: string }>();
  const counts = new Set<number>();
  const indices = new Set<number>();
  for (const { file, rows } of sets) {
    for (const row of rows) {
      let shard: { index: number; count: number } | undefined;
      try {
        shard = parseShardText(row.shard);
        counts.add(shard.count);
        indices.add(shard.index);
      } catch {
        warnings.push(`${file}: row for ${row.path} has no readable shard (${JSON.stringify(row.shard)})`);
      }
      if (shard && shard.count > 1 && shardOf(row.path, shard.count) !== shard.index)
        warnings.push(
          `${file}: ${row.path} belongs to shard ${shardOf(row.path, shard.count)}/${shard.count}, not ${row.shard}`,
        );
      const prev = byPath.get(row.path);
      if (prev) {
        warnings.push(`${row.path} appears in both ${prev.file} and ${file}; the newer row is kept`);
        if (prev.row.at >= row.at) continue;
      }
      byPath.set(row.path, { row, file });
    }
  }
  if (counts.size > 1)
    warnings.push(
      `the manifests come from different shard counts (${[...counts].sort((a, b) => a - b).join(', ')}); they do not describe one partition`,
    );
  const shards: string[] = [];
  if (counts.size === 1) {
    const n = [...counts][0];
    for (let i = 0; i < n; i++) if (indices.has(i)) shards.push(`${i}/${n}`);
    const missing = Array.from({ length: n }, (_, i) => i).filter((i) => !indices.has(i));
    if (missing.length)
      warnings.push(
        `no rows from shard${missing.length === 1 ? '' : 's'} ${missing.map((i) => `${i}/${n}`).join(', ')} (a missing manifest, or a shard with no files)`,
      );
  }
  return { rows: sortRows([...byPath.values()].map((v) => v.row)), warnings, shards };
}

export async function mergeManifests(
  manifests: string[],
  options: { outDir?: string; report?: string; manifest?: string } = {},
): Promise<MergeResult> {
  const started = performance.now();
  const sets: { file: string; rows: BatchRow[] }[] = [];
  const warnings: string[] = [];
  for (const m of manifests) {
    try {
      const r = await readManifest(m, { mustExist: true });
      if (r.skippedLines)
        warnings.push(
          `${m}: ${r.skippedLines} line${r.skippedLines === 1 ? '' : 's'} that are not manifest rows were skipped`,
        );
      sets.push({ file: m, rows: r.rows });
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      throw new UsageError(
        `--merge: manifest ${m} cannot be read (${code === 'ENOENT' ? 'no such file' : (code ?? (err as Error).message)})`,
      );
    }
  }
  const joined = joinRows(sets);
  warnings.push(...joined.warnings);
  const outDir = resolve(options.outDir ?? dirname(manifests[0]));
  const files = batchFiles(options.manifest ?? join(outDir, `${MANIFEST_NAME}.jsonl`), options.report);
  if (manifests.some((m) => resolve(m) === resolve(files.manifest)))
    throw new UsageError(
      `--merge: the merged manifest ${files.manifest} would replace one of its inputs; pass --manifest or -o`,
    );
  const rows = joined.rows;
  await writeManifest(files.manifest, rows);
  await writeFileAtomic(files.csv, rowsToCsv(rows), { force: true });
  await writeReport(files.report, rows, {
    title: `Rankfold batch: ${manifests.length} manifest${manifests.length === 1 ? '' : 's'} merged`,
    shards: joined.shards,
    warnings,
  });
  const summary: BatchSummary = { ...batchSummary(rows, rows.length, performance.now() - started), ...files };
  return { rows, summary, warnings };
}
