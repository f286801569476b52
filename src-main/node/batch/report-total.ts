/**
 * The report's section for a collection run (`--total`, `--plan`): the total against what was written, the
 * floor, the planned quality spread, predicted against achieved per file, and one ratio for all at the same
 * total. Words shared with the CLI summary come from collection-text.ts.
 */
import type { BatchRow } from '../../contract';
import type { CollectionInfo } from './collection';
import { collectionLines, mergedTotalLines } from './collection-text';
import { escapeHtml as esc, histogramSvg } from './report';

const dB = (v: number | undefined) => (v === undefined ? '' : Number.isFinite(v) ? v.toFixed(2) : '∞');

export function collectionSection(rows: BatchRow[], c: CollectionInfo): string {
  return totalSection(
    rows,
    collectionLines(c, rows),
    // A run with its own survey re-plans as files end; a run of a shared plan (--plan) has fixed caps.
    c.surveyFile
      ? `bytes a file did not use went to the files after it. The survey took ${(c.surveyMs / 1000).toFixed(1)} s${c.surveyReused ? ` (${c.surveyReused} curves read from the survey manifest)` : ''}.`
      : 'the caps of a shared plan are fixed, so bytes a file did not use stay unwritten.',
  );
}

/**
 * The same section for `batch --merge` of shards that encoded one shared plan, from the rows alone (each carries
 * its cap, predicted PSNR, the floor and the total): the total against the sum written, the reserve, each
 * shard's drift. Empty when no row carries a plan.
 */
export function mergedCollectionSection(rows: BatchRow[]): string {
  const m = mergedTotalLines(rows);
  const note = 'a shard cannot hand bytes to another, so bytes a file did not use stay unwritten.';
  return m.lines.length ? totalSection(rows, m.lines, note) : '';
}

function totalSection(rows: BatchRow[], lines: string[], unused: string): string {
  const planned = rows.filter((r) => r.plan);
  const table = planned
    .map((r) => {
      const p = r.plan!;
      const miss = r.psnr === undefined ? '' : dB(r.psnr - p.psnr);
      return `<tr><td>${esc(r.path)}</td><td class="n">${p.bytes}</td><td class="n">${r.bytes ?? ''}</td><td class="n">${dB(p.psnr)}</td><td class="n">${dB(r.psnr)}</td><td class="n">${miss}</td></tr>`;
    })
    .join('\n');
  return `<h2>Total for the folder</h2>
<ul>${lines.map((l) => `<li>${esc(l)}</li>`).join('')}</ul>
<p class="muted">Every file was encoded under a hard cap (its planned bytes), so no file can come out larger than planned; ${unused}</p>
<div class="plots">${histogramSvg(
    planned.map((r) => r.plan!.psnr),
    'planned PSNR',
    'dB',
  )}${histogramSvg(
    planned.map((r) => r.plan!.bytes / 1e3),
    'planned size',
    'kB',
  )}</div>
<table><thead><tr><th>file</th><th>planned bytes (cap)</th><th>written bytes</th><th>predicted PSNR dB</th><th>achieved PSNR dB</th><th>achieved − predicted dB</th></tr></thead>
<tbody>
${table}
</tbody></table>`;
}
