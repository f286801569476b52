/**
 * The morning report: one self-contained HTML page (inline CSS, inline SVG plots, inline script, thumbnails
 * as data URIs). It loads nothing from the network and opens offline in any browser.
 */
import type { BatchRow } from '../../contract';
import { LOSSY_CAUTION } from '../../contract';
import { writeFileAtomic } from '../io/atomic';
import { ranksWords, sortRows } from './manifest';
import { collectionSection, mergedCollectionSection } from './report-total';
import { makeThumbnails, type ThumbPair } from './thumbs';
import { niceTicks } from './ticks';

/** How many of the lowest-PSNR files get thumbnails (issue #13: the ten worst). */
const WORST_COUNT = 10;

export interface ReportInfo {
  title: string;
  inDir?: string;
  outDir?: string;
  shards: string[];
  elapsedMs?: number;
  warnings?: string[];
  /** `--total` or `--plan`: the plan's figures (report-total.ts adds its section). */
  collection?: import('./collection').CollectionInfo;
}

export function escapeHtml(s: unknown): string {
  return String(s ?? '').replace(
    /[&<>"']/g,
    (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!,
  );
}

function fmtBytes(n: number): string {
  if (n >= 1e9) return `${(n / 1e9).toFixed(2)} GB`;
  if (n >= 1e6) return `${(n / 1e6).toFixed(2)} MB`;
  if (n >= 1e3) return `${(n / 1e3).toFixed(1)} kB`;
  return `${n} B`;
}

const fmtDb = (v: number | undefined) =>
  v === undefined ? '' : Number.isFinite(v) ? v.toFixed(2) : '∞ (exact)';

function median(xs: number[]): number | undefined {
  if (!xs.length) return undefined;
  const s = xs.slice().sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/** Histogram as an inline SVG: `bins` equal-width bins over [min, max] of the finite values. */
export function histogramSvg(values: number[], label: string, unit: string, bins = 20): string {
  const xs = values.filter(Number.isFinite);
  // Width and height of the drawing, then its left, bottom, top and right margins (px).
  const [W, H, L, B, T, R] = [460, 200, 44, 36, 12, 12];
  if (!xs.length) return `<p class="muted">No ${escapeHtml(label)} values to plot.</p>`;
  let lo = Math.min(...xs);
  let hi = Math.max(...xs);
  if (hi === lo) {
    lo -= 0.5;
    hi += 0.5;
  }
  const counts = new Array(bins).fill(0);
  for (const x of xs) counts[Math.min(bins - 1, Math.floor(((x - lo) / (hi - lo)) * bins))]++;
  const top = Math.max(...counts);
  const bw = (W - L - R) / bins;
  const bars = counts
    .map((c, i) => {
      const h = ((H - B - T) * c) / top;
      const x0 = lo + ((hi - lo) * i) / bins;
      const x1 = lo + ((hi - lo) * (i + 1)) / bins;
      return `<rect x="${(L + i * bw + 1).toFixed(1)}" y="${(H - B - h).toFixed(1)}" width="${(bw - 2).toFixed(1)}" height="${h.toFixed(1)}"><title>${x0.toFixed(2)}–${x1.toFixed(2)} ${escapeHtml(unit)}: ${c} file${c === 1 ? '' : 's'}</title></rect>`;
    })
    .join('');
  // 1-2-5 ticks (ticks.ts): no repeated labels; the end labels are anchored inward so none is clipped.
  const span = W - L - R;
  const ticks = niceTicks(lo, hi)
    .map(({ value, label }) => {
      const x = L + ((value - lo) / (hi - lo)) * span;
      const anchor = x - L < 14 ? 'start' : W - R - x < 14 ? 'end' : 'middle';
      return `<line x1="${x.toFixed(1)}" y1="${H - B}" x2="${x.toFixed(1)}" y2="${H - B + 4}"/><text x="${x.toFixed(1)}" y="${H - B + 16}" text-anchor="${anchor}">${label}</text>`;
    })
    .join('');
  return `<svg class="plot" viewBox="0 0 ${W} ${H}" role="img" aria-label="${escapeHtml(label)} distribution">
<g class="bars">${bars}</g>
<g class="axis"><line x1="${L}" y1="${H - B}" x2="${W - R}" y2="${H - B}"/><line x1="${L}" y1="${T}" x2="${L}" y2="${H - B}"/>${ticks}
<text x="${L - 6}" y="${T + 8}" text-anchor="end">${top}</text><text x="${L - 6}" y="${H - B}" text-anchor="end">0</text>
<text x="${(L + W - R) / 2}" y="${H - 4}" text-anchor="middle">${escapeHtml(label)} (${escapeHtml(unit)})</text></g></svg>`;
}

const STYLE = `body{font:14px/1.45 system-ui,sans-serif;margin:24px;color:#1d2430;background:#fbfbf8;max-width:1200px}
h1{font-size:22px;margin:0 0 4px}h2{font-size:17px;margin:28px 0 8px;border-bottom:1px solid #d8d8d0;padding-bottom:4px}
.muted{color:#667}.caution{background:#fff6dc;border-left:4px solid #d9a400;padding:8px 12px}
.totals{display:grid;grid-template-columns:repeat(auto-fill,minmax(170px,1fr));gap:8px}
.totals div{background:#fff;border:1px solid #e2e2da;border-radius:6px;padding:8px}.totals b{display:block;font-size:18px}
.plots{display:flex;flex-wrap:wrap;gap:16px}.plot{width:460px;max-width:100%;background:#fff;border:1px solid #e2e2da}
.bars rect{fill:#3f6f8f}.axis line{stroke:#556}.axis text{font-size:11px;fill:#334}
table{border-collapse:collapse;width:100%;background:#fff}th,td{border-bottom:1px solid #e6e6e0;padding:4px 6px;text-align:left;vertical-align:top}
th button{font:inherit;font-weight:600;background:none;border:0;padding:0;cursor:pointer;color:#1d4f73}th button::after{content:" ↕";color:#99a}
td.n{text-align:right;font-variant-numeric:tabular-nums}tr.failed td{background:#fff1f0}tr.skipped td{background:#f4f4ee}.err{color:#a02020}
.pairs{display:grid;grid-template-columns:repeat(auto-fill,minmax(340px,1fr));gap:14px}.pair{background:#fff;border:1px solid #e2e2da;padding:8px;margin:0}.duo{display:flex;gap:6px;align-items:flex-start}.duo span{font-size:11px;color:#667;display:block}
.pair img{max-width:160px;max-height:200px;border:1px solid #ccc}.pair figcaption{font-size:12px}
code{font-size:12px}`;

const SCRIPT = `(function(){var t=document.getElementById('rows');if(!t)return;var dir={};
t.querySelectorAll('th button').forEach(function(b){b.addEventListener('click',function(){var k=b.getAttribute('data-k');var num=b.hasAttribute('data-num');
dir[k]=-(dir[k]||-1);var body=t.tBodies[0];var rs=Array.prototype.slice.call(body.rows);
rs.sort(function(a,c){var x=a.getAttribute('data-'+k)||'',y=c.getAttribute('data-'+k)||'';
if(num){var xn=x===''?NaN:Number(x),yn=y===''?NaN:Number(y);if(isNaN(xn)&&isNaN(yn))return 0;if(isNaN(xn))return 1;if(isNaN(yn))return -1;return dir[k]*(xn-yn);}
return dir[k]*x.localeCompare(y);});rs.forEach(function(r){body.appendChild(r);});});});})();`;

/** Render the report HTML. `thumbs` maps a row's path to its thumbnail pair. */
export function renderReport(
  rowsIn: BatchRow[],
  info: ReportInfo,
  thumbs: Map<string, ThumbPair> = new Map(),
): string {
  const rows = sortRows(rowsIn);
  const good = rows.filter((r) => r.status === 'ok' || r.status === 'kept');
  const failed = rows.filter((r) => r.status === 'failed');
  const skipped = rows.filter((r) => r.status === 'skipped');
  const psnrs = good.map((r) => r.psnr).filter((v): v is number => typeof v === 'number');
  const ratios = good
    .map((r) => r.ratio)
    .filter((v): v is number => typeof v === 'number' && Number.isFinite(v));
  const rawSum = good.reduce((s, r) => s + (r.rawBytes ?? 0), 0);
  const outSum = good.reduce((s, r) => s + (r.bytes ?? 0), 0);
  const inSum = good.reduce((s, r) => s + (r.inputBytes ?? 0), 0);
  const finitePsnr = psnrs.filter(Number.isFinite);
  const worst = worstRows(rows);
  const totals: [string, string][] = [
    ['files', String(rows.length)],
    ['compressed in this run', String(rows.filter((r) => r.status === 'ok').length)],
    ['kept from an earlier run', String(rows.filter((r) => r.status === 'kept').length)],
    ['failed', String(failed.length)],
    ['skipped (not scans, or not regular files)', String(skipped.length)],
    ['input files', fmtBytes(inSum)],
    ['raw samples', fmtBytes(rawSum)],
    ['written (.rkf)', fmtBytes(outSum)],
    ['overall ratio (raw ÷ written)', outSum ? `${(rawSum / outSum).toFixed(2)}×` : '–'],
    ['median PSNR', finitePsnr.length ? `${fmtDb(median(finitePsnr))} dB` : '–'],
    ['lowest PSNR', finitePsnr.length ? `${fmtDb(Math.min(...finitePsnr))} dB` : '–'],
    ['shards', info.shards.join(', ')],
  ];
  if (info.elapsedMs !== undefined) totals.push(['wall time', `${(info.elapsedMs / 1000).toFixed(1)} s`]);
  const th = (k: string, label: string, num = false) =>
    `<th><button type="button" data-k="${k}"${num ? ' data-num' : ''}>${label}</button></th>`;
  const tableRows = rows
    .map((r) => {
      const attrs = [
        ['path', r.path],
        ['status', r.status],
        ['bytes', r.bytes ?? ''],
        ['ratio', r.ratio ?? ''],
        ['psnr', r.psnr === undefined ? '' : Number.isFinite(r.psnr) ? r.psnr : 1e9],
        ['ssim', r.ssim ?? ''],
        ['time', r.timeMs ?? ''],
        ['error', r.error?.message ?? (r.status === 'skipped' ? (r.note ?? '') : '')],
      ]
        .map(([k, v]) => `data-${k}="${escapeHtml(v)}"`)
        .join(' ');
      return `<tr class="${r.status}" ${attrs}><td>${escapeHtml(r.path)}</td><td>${r.status}</td><td class="n">${r.bytes === undefined ? '' : fmtBytes(r.bytes)}</td><td class="n">${r.ratio === undefined ? '' : r.ratio.toFixed(2)}</td><td class="n">${fmtDb(r.psnr)}</td><td class="n">${r.ssim === undefined ? '' : r.ssim.toFixed(4)}</td><td>${escapeHtml(ranksWords(r.ranks))}</td><td class="n">${r.timeMs === undefined ? '' : (r.timeMs / 1000).toFixed(2)}</td><td class="err">${escapeHtml(r.error?.message ?? (r.status === 'skipped' ? (r.note ?? '') : ''))}</td></tr>`;
    })
    .join('\n');
  const pairs = worst
    .map((r) => {
      const t = thumbs.get(r.path) ?? {};
      const img = (src: string | undefined, alt: string, label: string) =>
        src ? `<div><img src="${src}" alt="${escapeHtml(alt)}"><span>${label}</span></div>` : '';
      return `<figure class="pair"><div class="duo">${img(t.original, `original ${r.path}`, 'original')}${img(t.reconstruction, `reconstruction ${r.path}`, 'reconstruction (.rkf)')}</div><figcaption><b>${escapeHtml(r.path)}</b><br>PSNR ${fmtDb(r.psnr)} dB · SSIM ${r.ssim?.toFixed(4) ?? '–'} · ratio ${r.ratio?.toFixed(2) ?? '–'}×${t.note ? `<br><span class="muted">${escapeHtml(t.note)}</span>` : ''}</figcaption></figure>`;
    })
    .join('\n');
  const failures = failed.length
    ? `<ol>${failed.map((r) => `<li><code>${escapeHtml(r.path)}</code> — <span class="err">${escapeHtml(r.error?.message ?? 'failed')}</span></li>`).join('')}</ol>`
    : '<p>No failures.</p>';
  const skippedList = skipped.length
    ? `<h2>Skipped (${skipped.length})</h2><p class="muted">Not scans (read, not an image) or not regular files (never opened): listed, not counted as failures.</p><ul>${skipped.map((r) => `<li><code>${escapeHtml(r.path)}</code> — ${escapeHtml(r.note ?? 'not a regular file')}</li>`).join('')}</ul>`
    : '';
  const warnings = info.warnings?.length
    ? `<h2>Warnings</h2><ul>${info.warnings.map((w) => `<li>${escapeHtml(w)}</li>`).join('')}</ul>`
    : '';
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src data:; style-src 'unsafe-inline'; script-src 'unsafe-inline'">
<title>${escapeHtml(info.title)}</title><style>${STYLE}</style></head><body>
<h1>${escapeHtml(info.title)}</h1>
<p class="muted">${info.inDir ? `Input <code>${escapeHtml(info.inDir)}</code> · ` : ''}${info.outDir ? `output <code>${escapeHtml(info.outDir)}</code> · ` : ''}written ${escapeHtml(new Date().toISOString())}</p>
<p class="caution">${escapeHtml(LOSSY_CAUTION)}</p>
<h2>Totals</h2><div class="totals">${totals.map(([k, v]) => `<div><span class="muted">${escapeHtml(k)}</span><b>${escapeHtml(v)}</b></div>`).join('')}</div>
${info.collection ? collectionSection(rows, info.collection) : mergedCollectionSection(rows)}
<h2>Distributions</h2><div class="plots">${histogramSvg(ratios, 'compression ratio', 'raw ÷ written')}${histogramSvg(finitePsnr, 'PSNR', 'dB')}${histogramSvg(
    good.map((r) => (r.bytes ?? 0) / 1e3),
    'file size',
    'kB',
  )}</div>
<h2>Failures (${failed.length})</h2>${failures}
${skippedList}
<h2>Lowest PSNR (${worst.length})</h2>${pairs ? `<div class="pairs">${pairs}</div>` : '<p>No compressed files.</p>'}
${warnings}
<h2>All files</h2><p class="muted">Click a column heading to sort.</p>
<table id="rows"><thead><tr>${th('path', 'file')}${th('status', 'status')}${th('bytes', 'bytes', true)}${th('ratio', 'ratio', true)}${th('psnr', 'PSNR dB', true)}${th('ssim', 'SSIM', true)}<th>ranks</th>${th('time', 'time s', true)}${th('error', 'error')}</tr></thead>
<tbody>
${tableRows}
</tbody></table>
<script>${SCRIPT}</script>
</body></html>
`;
}

/** The lowest-PSNR rows that have an output (exact files last, since they have nothing to show). */
export function worstRows(rows: BatchRow[], count = WORST_COUNT): BatchRow[] {
  return rows.filter(rankedForWorst).sort(worseFirst).slice(0, count);
}

/** Rows the report can rank by PSNR. */
const rankedForWorst = (r: BatchRow) =>
  (r.status === 'ok' || r.status === 'kept') && typeof r.psnr === 'number';

/** Lower PSNR first, then path: the order of `worstRows`. */
const worseFirst = (a: Pick<BatchRow, 'psnr' | 'path'>, b: Pick<BatchRow, 'psnr' | 'path'>) =>
  a.psnr! - b.psnr! || (a.path < b.path ? -1 : a.path > b.path ? 1 : 0);

/**
 * The `worstRows` of the rows finished so far, kept as they arrive (at most `count` entries). `bound()` is the
 * PSNR a file must not exceed to enter them. The bound only falls as rows arrive, so a file that ends among
 * the final worst was at or below the bound in force when it was dispatched.
 */
export class WorstSoFar {
  private readonly list: Array<{ psnr: number; path: string }> = [];
  constructor(private readonly count = WORST_COUNT) {}

  add(r: BatchRow): void {
    if (!rankedForWorst(r)) return;
    const e = { psnr: r.psnr!, path: r.path };
    let i = this.list.length;
    while (i > 0 && worseFirst(e, this.list[i - 1]) < 0) i--;
    if (i >= this.count) return;
    this.list.splice(i, 0, e);
    if (this.list.length > this.count) this.list.pop();
  }

  /** +∞ while fewer than `count` rows are ranked. */
  bound(): number {
    return this.list.length < this.count ? Number.POSITIVE_INFINITY : this.list[this.count - 1].psnr;
  }

  has(path: string): boolean {
    return this.list.some((e) => e.path === path);
  }
}

/**
 * The thumbnails of the worst rows (`worstRows`): those in `drawn` (drawn by the compress jobs while source and
 * reconstruction were in memory), the others drawn by `draw`.
 */
export async function worstThumbnails(
  rows: BatchRow[],
  drawn: Map<string, ThumbPair>,
  draw: (r: BatchRow) => Promise<ThumbPair>,
): Promise<Map<string, ThumbPair>> {
  const final = worstRows(rows);
  const late = await makeThumbnails(
    final.filter((r) => !drawn.has(r.path)),
    draw,
  );
  return new Map(final.map((r) => [r.path, drawn.get(r.path) ?? late.get(r.path)!]));
}

/**
 * Render with thumbnails of the worst files (`worstRows`) and write atomically. `thumbs`, when given, holds
 * those pairs already drawn (the batch runner draws them on its workers); otherwise they are drawn here.
 */
export async function writeReport(
  file: string,
  rows: BatchRow[],
  info: ReportInfo,
  thumbs?: Map<string, ThumbPair>,
): Promise<void> {
  thumbs ??= await makeThumbnails(worstRows(rows));
  await writeFileAtomic(file, renderReport(rows, info, thumbs), { force: true });
}
