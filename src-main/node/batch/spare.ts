/**
 * Spare bytes at the end of a one-machine `--total` run (issue #13). Every file is encoded under a hard cap, so
 * the sum written ends a little under the total: the last files came out under their caps and nothing was left
 * to hand their bytes to. Those spare bytes go to the worst files: each is encoded again, to a temp file beside
 * its output, under a cap of its own bytes plus the spare bytes, and replaces its output (an atomic rename) only
 * when its PSNR is higher and the sum stays within the total; otherwise the temp file is removed and the output
 * stays as it was. At most {@link MAX_TRIES} files are tried, worst first, while the spare bytes are worth it.
 * Shards (`--plan`) never do this: a shard does not know what the others wrote.
 */
import { randomBytes } from 'node:crypto';
import { rename, rm } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import type { BatchRow } from '../../contract';
import { TEMP_PREFIX } from '../io/atomic';
import type { BatchJobResult, BatchWork, BatchWorkResult } from './job';
import type { WorkerPool } from './pool';
import { rowFromResult } from './rows';
import type { Run } from './run-options';
import type { Tally } from './tally';

/** Files tried at most (each costs one more encode), and the least spare worth an encode. */
const MAX_TRIES = 3;
const MIN_SPARE_BYTES = 64;
const MIN_SPARE_SHARE = 0.005;

/** What the spare step did, for the summary and the report. */
export interface SpareInfo {
  /** Bytes left under the total after the encode, and after this step. */
  before: number;
  after: number;
  tried: number;
  /** Files replaced, with their PSNR before and after. */
  replaced: { path: string; from: number; to: number; bytesFrom: number; bytesTo: number }[];
}

/** The rows whose outputs this run wrote, worst PSNR first (exact files and failures are never tried). */
function candidates(rows: BatchRow[]): BatchRow[] {
  return rows
    .filter((r) => r.status === 'ok' && r.plan && r.bytes && r.psnr !== undefined && Number.isFinite(r.psnr))
    .sort((a, b) => a.psnr! - b.psnr! || (a.path < b.path ? -1 : 1));
}

/**
 * The temp file a spare encode writes beside `output`: named as the atomic writer names its temp files, so a
 * run killed mid-step leaves nothing that the next run's sweep (io/atomic.ts `sweepTemps`) does not remove.
 */
function spareTemp(output: string): string {
  return join(dirname(output), `${TEMP_PREFIX}${randomBytes(6).toString('hex')}-${basename(output)}`);
}

/**
 * Spend what is left of the total on the worst files. `append` journals a replaced file's new row; `replaced`
 * hears of each replaced path (its report thumbnails must be drawn again).
 */
export async function spendSpare(
  run: Run,
  on: {
    pool: WorkerPool<BatchWork, BatchWorkResult>;
    tally: Tally;
    append: (row: BatchRow) => Promise<void>;
    replaced: (path: string) => void;
    stopped: () => boolean;
  },
): Promise<SpareInfo | undefined> {
  const total = run.collection?.total;
  if (!total) return undefined;
  const rows = on.tally.rows;
  const written = rows
    .filter((r) => r.status === 'ok' || r.status === 'kept')
    .reduce((s, r) => s + (r.bytes ?? 0), 0);
  const info: SpareInfo = { before: total - written, after: total - written, tried: 0, replaced: [] };
  for (const r of candidates(rows)) {
    if (info.tried >= MAX_TRIES || on.stopped()) break;
    if (info.after < Math.max(MIN_SPARE_BYTES, MIN_SPARE_SHARE * r.bytes!)) break;
    info.tried++;
    const cap = r.bytes! + info.after;
    const temp = spareTemp(r.outputAbs);
    try {
      const outcome = await on.pool.run(
        {
          input: r.inputAbs,
          output: temp,
          options: { ...run.o.compress, budget: { kind: 'bytes', bytes: cap } },
          overwrite: true,
          expandCheck: Boolean(run.o.expandCheck),
        },
        { timeoutMs: run.timeoutMs, label: r.path },
      );
      if (!outcome.ok) continue;
      const f = { path: r.path, output: r.output, inputAbs: r.inputAbs, outputAbs: r.outputAbs, size: 0 };
      const next = rowFromResult(f, r.shard, outcome.value as BatchJobResult, `${run.settings} bytes=${cap}`);
      const better = next.status === 'ok' && next.psnr! > r.psnr! && next.bytes! <= cap;
      if (!better || on.stopped()) continue;
      await rename(temp, r.outputAbs);
      const was = { psnr: r.psnr!, bytes: r.bytes! };
      Object.assign(r, next, {
        plan: { ...r.plan!, bytes: cap },
        note: `re-encoded with ${info.after} spare bytes of the total: ${was.bytes} → ${next.bytes} bytes, PSNR ${was.psnr.toFixed(2)} → ${next.psnr!.toFixed(2)} dB`,
      });
      info.after -= next.bytes! - was.bytes;
      info.replaced.push({
        path: r.path,
        from: was.psnr,
        to: r.psnr!,
        bytesFrom: was.bytes,
        bytesTo: r.bytes!,
      });
      on.replaced(r.path);
      await on.append(r);
    } finally {
      await rm(temp, { force: true });
    }
  }
  return info;
}
