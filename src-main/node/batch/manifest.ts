/**
 * The batch manifest: JSON lines, one {@link BatchRow} per input. While a batch runs, rows are appended
 * as files finish (so a killed run keeps what it finished); at the end the file is rewritten atomically
 * with exactly one row per input, sorted by path. A reader ignores a torn last line and takes the last
 * row for each path. The CSV holds the same rows (RFC 4180 quoting).
 */
import { open, readFile } from 'node:fs/promises';
import type { BatchRow } from '../../contract';
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

/** The few file-handle calls the journal makes; a test passes a layer that fails on purpose. */
export interface JournalHandle {
  /** pwrite: `length` bytes of `data` from `offset`, at file `position`. */
  write(
    data: Uint8Array,
    offset: number,
    length: number,
    position: number,
  ): Promise<{ bytesWritten: number }>;
  sync(): Promise<void>;
  truncate(len: number): Promise<void>;
  readFile(): Promise<Buffer>;
  close(): Promise<void>;
}
export type JournalOpen = (file: string, flags: 'w' | 'a+') => Promise<JournalHandle>;

const openJournalFile: JournalOpen = (file, flags) => open(file, flags);

/**
 * Appends rows as they finish. Each row is whole or absent: it is written with one write() call and fsynced;
 * when the write fails or is short (a full disk: ENOSPC, or a quota: EDQUOT) or the fsync fails, the file is
 * truncated back to the end of the last whole row. The batch goes on; later rows are tried again, and the
 * final manifest is rewritten atomically anyway. A run reopened with --resume first cuts a torn last line
 * (left by a kill mid-write or by an older version) back to the last whole row.
 */
export class ManifestJournal {
  private fh?: JournalHandle;
  private chain: Promise<void> = Promise.resolve();
  /** Bytes of whole rows in the file: where the next row starts, and where a failed append is cut back to. */
  private size = 0;
  /** The first append error, if any (reported at the end; the batch itself goes on). */
  error?: Error;
  /** Rows that could not be appended. */
  lost = 0;

  constructor(
    readonly file: string,
    private readonly openFile: JournalOpen = openJournalFile,
  ) {}

  async open(truncate: boolean): Promise<void> {
    // 'a+': every write lands at the end (O_APPEND), and the old contents can be read to find the last row.
    const fh = await this.openFile(this.file, truncate ? 'w' : 'a+');
    try {
      if (!truncate) {
        const old = await fh.readFile();
        const end = old.lastIndexOf(0x0a) + 1;
        if (end < old.length) {
          await fh.truncate(end);
          await fh.sync();
        }
        this.size = end;
      }
    } catch (err) {
      await fh.close().catch(() => {});
      throw err;
    }
    this.fh = fh;
  }

  append(row: BatchRow): Promise<void> {
    this.chain = this.chain.then(async () => {
      const fh = this.fh;
      if (!fh) return;
      const line = Buffer.from(`${rowToJson(row)}\n`, 'utf8');
      try {
        // At the end of the last whole row, given explicitly: after a cut-back the file offset of a
        // non-append handle would still point past the end and leave a hole of NUL bytes.
        const { bytesWritten } = await fh.write(line, 0, line.length, this.size);
        if (bytesWritten !== line.length)
          throw Object.assign(
            new Error(`short write: ${bytesWritten} of ${line.length} bytes (is the disk full?)`),
            { code: 'ENOSPC' },
          );
        await fh.sync();
        this.size += line.length;
      } catch (err) {
        this.lost++;
        this.error ??= err as Error;
        // Cut the partial row, so the file holds whole rows only. If even that fails, a reader still skips
        // the torn line, and --resume cuts it when it reopens the journal.
        await fh.truncate(this.size).catch(() => {});
        await fh.sync().catch(() => {});
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
function ranksText(ranks: BatchRow['ranks']): string {
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

/**
 * Ranks in words for the report: `gray: rank 40`, or for tiles `gray: 1786 tiles, rank 0 to 27 (mean 4.2)`.
 * The CSV keeps the short form of {@link ranksText}.
 */
export function ranksWords(ranks: BatchRow['ranks']): string {
  if (!ranks) return '';
  return ranks
    .map((r) => {
      if (r.rank !== undefined) return `${r.channel}: rank ${r.rank}`;
      const t = r.tiles;
      if (!t) return r.channel;
      const span =
        t.min === t.max ? `rank ${t.min}` : `rank ${t.min} to ${t.max} (mean ${t.mean.toFixed(1)})`;
      return `${r.channel}: ${t.count} tile${t.count === 1 ? '' : 's'}, ${span}`;
    })
    .join('; ');
}

const CSV_COLUMNS = [
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
