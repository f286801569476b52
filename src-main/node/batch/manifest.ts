/**
 * The batch manifest: JSON lines, one {@link BatchRow} per input. While a batch runs, rows are appended
 * as files finish (so a killed run keeps what it finished); at the end the file is rewritten atomically
 * with exactly one row per input, sorted by path. A reader ignores a torn last line and takes the last
 * row for each path. The CSV holds the same rows (RFC 4180 quoting).
 */
import { open, readFile } from 'node:fs/promises';
import { type BatchRow, MANIFEST_VERSION } from '../../contract';
import { writeFileAtomic } from '../io/atomic';

export const MANIFEST_NAME = 'rankfold-manifest';

/** Default manifest/CSV/report base name for a shard: `rankfold-manifest` or `rankfold-manifest-2of8`. */
export function manifestBase(shardIndex: number, shardCount: number): string {
  return shardCount > 1 ? `${MANIFEST_NAME}-${shardIndex}of${shardCount}` : MANIFEST_NAME;
}

/** JSON with non-finite numbers kept readable: PSNR of a lossless file is Infinity, stored as the string "Infinity". */
export function rowToJson(row: BatchRow): string {
  return JSON.stringify(row, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? String(v) : v));
}

function revive(_k: string, v: unknown) {
  return v === 'Infinity'
    ? Number.POSITIVE_INFINITY
    : v === '-Infinity'
      ? Number.NEGATIVE_INFINITY
      : v === 'NaN'
        ? Number.NaN
        : v;
}

export interface ManifestRead {
  rows: BatchRow[];
  /** Lines that were not valid rows (a torn last line after a kill, or foreign text). */
  skippedLines: number;
}

/** Read a manifest; the last row for each path wins. A missing file reads as empty. */
export async function readManifest(file: string, { mustExist = false } = {}): Promise<ManifestRead> {
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch (err) {
    if (!mustExist && (err as NodeJS.ErrnoException).code === 'ENOENT') return { rows: [], skippedLines: 0 };
    throw err;
  }
  const byPath = new Map<string, BatchRow>();
  let skippedLines = 0;
  for (const line of text.split('\n')) {
    if (!line.trim()) continue;
    try {
      const row = JSON.parse(line, revive) as BatchRow;
      if (typeof row?.path !== 'string' || typeof row.status !== 'string') throw new Error('not a row');
      byPath.set(row.path, row);
    } catch {
      skippedLines++;
    }
  }
  return { rows: [...byPath.values()], skippedLines };
}

export function sortRows(rows: BatchRow[]): BatchRow[] {
  return rows.slice().sort((a, b) => (a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
}

/** Appends rows as they finish. Each line is written with one write() call, so a kill tears at most the last line. */
export class ManifestJournal {
  private fh?: Awaited<ReturnType<typeof open>>;
  private chain: Promise<void> = Promise.resolve();
  /** The first append error, if any (reported at the end; the batch itself goes on). */
  error?: Error;

  constructor(readonly file: string) {}

  async open(truncate: boolean): Promise<void> {
    this.fh = await open(this.file, truncate ? 'w' : 'a');
    // A torn line from a killed run must not glue onto the next row.
    if (!truncate) await this.fh.write('\n');
  }

  append(row: BatchRow): Promise<void> {
    this.chain = this.chain.then(async () => {
      if (!this.fh || this.error) return;
      try {
        await this.fh.write(`${rowToJson(row)}\n`);
      } catch (err) {
        this.error = err as Error;
      }
    });
    return this.chain;
  }

  async close(): Promise<void> {
    await this.chain;
    await this.fh?.close().catch(() => {});
    this.fh = undefined;
  }
}

/** Rewrite a manifest atomically with one row per input, sorted by path. */
export async function writeManifest(file: string, rows: BatchRow[]): Promise<void> {
  const text = sortRows(rows)
    .map((r) => `${rowToJson(r)}\n`)
    .join('');
  await writeFileAtomic(file, text, { force: true });
}

/** Ranks as short text: `Y:40 Cb:12` for whole planes, `Y:t64[3–40]` for tiles (count, min–max). */
export function ranksText(ranks: BatchRow['ranks']): string {
  if (!ranks) return '';
  return ranks
    .map((r) =>
      r.rank !== undefined
        ? `${r.channel}:${r.rank}`
        : r.tiles
          ? `${r.channel}:t${r.tiles.count}[${r.tiles.min}-${r.tiles.max}]`
          : r.channel,
    )
    .join(' ');
}

export const CSV_COLUMNS = [
  'path',
  'output',
  'status',
  'bytes',
  'inputBytes',
  'rawBytes',
  'ratio',
  'bpp',
  'psnr',
  'ssim',
  'width',
  'height',
  'channels',
  'bitDepth',
  'ranks',
  'timeMs',
  'settings',
  'check',
  'note',
  'error',
  'fileSha256',
  'sourceSha256',
  'shard',
  'at',
] as const;

function csvCell(v: unknown): string {
  if (v === undefined || v === null) return '';
  const s = typeof v === 'number' ? (Number.isFinite(v) ? String(v) : String(v)) : String(v);
  return /[",\r\n]/.test(s) || /^\s|\s$/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** CSV text of the rows (header line first). */
export function rowsToCsv(rows: BatchRow[]): string {
  const lines = [CSV_COLUMNS.join(',')];
  for (const r of sortRows(rows)) {
    const cells: unknown[] = CSV_COLUMNS.map((c) => {
      if (c === 'ranks') return ranksText(r.ranks);
      if (c === 'error') return r.error?.message;
      if (c === 'check') return r.check ? (r.check.ok ? 'ok' : `failed: ${r.check.message ?? ''}`) : '';
      if (c === 'timeMs') return r.timeMs === undefined ? undefined : Math.round(r.timeMs);
      return (r as unknown as Record<string, unknown>)[c];
    });
    lines.push(cells.map(csvCell).join(','));
  }
  return `${lines.join('\r\n')}\r\n`;
}

export { MANIFEST_VERSION };
