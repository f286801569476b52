/**
 * The words a collection run (`--total`, `--plan`) prints when it ends, and those `batch --plan` prints:
 * the total against what was written, the floor, the spread of quality, the reserve, and the comparison with
 * one ratio for all files. Shared by the CLI summary and the report.
 */
import type { BatchRow } from '../../contract';
import type { CollectionInfo } from './collection';
import { type SharedPlan, sizeText } from './plan-file';
import type { SpareInfo } from './spare';

const db = (x: number) => (Number.isFinite(x) ? `${x.toFixed(2)} dB` : 'exact');

/** Lowest, median and highest of a list, as text. */
function spreadText(values: number[]): string {
  if (!values.length) return 'none';
  const v = values.slice().sort((a, b) => a - b);
  return `lowest ${db(v[0])}, median ${db(v[v.length >> 1])}, highest ${db(v[v.length - 1])}`;
}

/** Lines for the end of a collection run. */
export function collectionLines(c: CollectionInfo, rows: BatchRow[]): string[] {
  const written = rows.filter((r) => r.status === 'ok' || r.status === 'kept');
  const planned = rows.filter((r) => r.status === 'planned' && r.plan);
  const lines: string[] = [];
  if (!c.total) {
    lines.push(
      `survey: ${rows.filter((r) => r.note === 'surveyed').length} files measured in ${(c.surveyMs / 1000).toFixed(1)} s${c.surveyFile ? `, written to ${c.surveyFile}` : ''}`,
    );
    return lines;
  }
  if (planned.length) {
    const sum = planned.reduce((s, r) => s + r.plan!.bytes, 0);
    lines.push(
      `plan (dry run, nothing written): predicted floor ${db(c.floor)}; ${sum} bytes (${sizeText(sum)}) of the total ${c.total} (${c.totalText})`,
    );
    lines.push(`predicted PSNR: ${spreadText(planned.map((r) => r.plan!.psnr))}`);
  } else {
    const sum = written.reduce((s, r) => s + (r.bytes ?? 0), 0);
    const ok = sum <= c.total;
    lines.push(
      `total: ${sum} bytes (${sizeText(sum)}) written of ${c.total} (${c.totalText})${ok ? ', within the total' : ', OVER THE TOTAL'}`,
    );
    lines.push(
      `floor: predicted ${db(c.floor)}; achieved PSNR ${spreadText(written.filter((r) => r.psnr !== undefined).map((r) => r.psnr!))}`,
    );
  }
  if (c.spare) lines.push(spareLine(c.spare));
  if (c.reserve)
    lines.push(`reserve: ${c.reserve} bytes (${sizeText(c.reserve)}) held back from the plan for drift`);
  lines.push(...oneRatioLines(c));
  for (const x of c.excluded) lines.push(`left out of the plan: ${x.message}`);
  return lines;
}

/** One ratio for all files at the same total, against this plan: its worst file, and the bytes this plan saves. */
function oneRatioLines(c: Pick<CollectionInfo, 'oneRatioWorst' | 'oneRatioBytes' | 'floor' | 'planned'>) {
  const lines: string[] = [];
  if (c.oneRatioWorst !== undefined)
    lines.push(
      `one ratio for all at the same total: worst file predicted at ${db(c.oneRatioWorst)} (this plan: ${db(c.floor)})`,
    );
  const saved = savedBytes(c);
  if (saved !== undefined)
    lines.push(
      saved > 0
        ? `bytes saved against one ratio for all: one ratio would need about ${c.oneRatioBytes} bytes (${sizeText(c.oneRatioBytes!)}) to give every file the floor, this plan ${c.planned}: ${saved} bytes (${sizeText(saved)}, ${((100 * saved) / c.oneRatioBytes!).toFixed(1)} %) saved`
        : `bytes saved against one ratio for all: none (one ratio would need about ${c.oneRatioBytes} bytes to give every file the floor, this plan ${c.planned})`,
    );
  return lines;
}

/** Bytes one ratio for all would need for the floor, less the plan's: undefined when not predicted. */
const savedBytes = (c: Pick<CollectionInfo, 'oneRatioBytes' | 'planned'>) =>
  c.oneRatioBytes === undefined ? undefined : c.oneRatioBytes - c.planned;

/**
 * A collection run's figures for `--json` (one `{"event":"total", …}` line after the end event): the total and
 * what was written, the predicted floor and the lowest PSNR achieved, the reserve, one ratio for all and the
 * bytes saved against it, the spare step, and the files left out.
 */
export function collectionJson(c: CollectionInfo, rows: BatchRow[]): Record<string, unknown> {
  const written = rows.filter((r) => r.status === 'ok' || r.status === 'kept');
  const sum = written.reduce((s, r) => s + (r.bytes ?? 0), 0);
  const psnrs = written.map((r) => r.psnr).filter((v): v is number => v !== undefined);
  return {
    event: 'total',
    total: c.total,
    totalText: c.totalText,
    favour: c.favour,
    written: sum,
    withinTotal: sum <= c.total,
    floorPredicted: c.floor,
    lowestPsnr: psnrs.length ? Math.min(...psnrs) : null,
    planned: c.planned,
    minimum: c.minimum,
    reserve: c.reserve,
    oneRatioWorst: c.oneRatioWorst ?? null,
    oneRatioBytes: c.oneRatioBytes ?? null,
    bytesSaved: savedBytes(c) ?? null,
    surveyMs: c.surveyMs,
    spare: c.spare ?? null,
    excluded: c.excluded,
  };
}

/** What the spare step did (spare.ts), in one line. */
function spareLine(s: SpareInfo): string {
  const left = `${s.before} bytes were left under the total after the encode`;
  if (!s.tried) return `spare: ${left}, too few for another encode`;
  const files = s.replaced.map((r) => `${r.path} ${db(r.from)} → ${db(r.to)}`).join(', ');
  return `spare: ${left}; ${s.replaced.length} of the ${s.tried} worst file${s.tried === 1 ? '' : 's'} tried ${s.replaced.length === 1 ? 'was' : 'were'} re-encoded with them${files ? ` (${files})` : ''}; ${s.after} bytes left`;
}

/** Lines `batch --plan … -o plan.json` prints. */
export function planLines(p: SharedPlan): string[] {
  return [
    `plan: ${p.files.length} files into ${p.totalText} (${p.total} bytes): predicted floor ${db(p.floor)}, ${p.planned} bytes planned`,
    `reserve: ${p.reserve} bytes (${sizeText(p.reserve)}) held back for drift`,
    `predicted PSNR: ${spreadText(p.files.map((f) => f.psnr))}`,
    ...oneRatioLines(p),
    ...p.excluded.map((x) => `left out of the plan: ${x.message}`),
  ];
}

/**
 * `batch --merge` of shards that encoded one shared plan: the sum written against the plan's total, the bytes
 * that remain, the bytes no file was given (the plan's reserve, as seen from the rows), and each shard's drift:
 * what it wrote against the caps it was planned. Empty when the rows carry no plan. `over` is true when the
 * sum is above the total.
 */
export function mergedTotalLines(rows: BatchRow[]): { lines: string[]; over: boolean } {
  const planned = rows.filter((r) => r.plan);
  if (!planned.length) return { lines: [], over: false };
  const total = planned[0].plan!.total;
  const wrote = (r: BatchRow) => (r.status === 'ok' || r.status === 'kept' ? (r.bytes ?? 0) : 0);
  const written = rows.filter((r) => r.status === 'ok' || r.status === 'kept');
  const sum = rows.reduce((s, r) => s + wrote(r), 0);
  const caps = planned.reduce((s, r) => s + r.plan!.bytes, 0);
  const shards = new Map<string, { written: number; caps: number; files: number }>();
  for (const r of planned) {
    const s = shards.get(r.shard) ?? { written: 0, caps: 0, files: 0 };
    s.written += wrote(r);
    s.caps += r.plan!.bytes;
    s.files++;
    shards.set(r.shard, s);
  }
  const signed = (n: number) => (n > 0 ? `+${n}` : `${n}`);
  const drift = [...shards]
    .sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0))
    .map(
      ([shard, s]) =>
        `drift of shard ${shard}: ${s.written} bytes written against ${s.caps} planned for its ${s.files} file${s.files === 1 ? '' : 's'} (${signed(s.written - s.caps)} bytes, ${signed(Math.round((1000 * (s.written - s.caps)) / Math.max(1, s.caps)) / 10)} %)`,
    );
  return {
    lines: [
      `total: ${sum} bytes (${sizeText(sum)}) written of ${total} (${sizeText(total)})${sum <= total ? ', within the total' : ', OVER THE TOTAL'}`,
      sum <= total
        ? `remaining: ${total - sum} bytes (${sizeText(total - sum)}) of the total not written`
        : `remaining: none; the files are ${sum - total} bytes over the total`,
      `reserve: ${total - caps} bytes (${sizeText(Math.max(0, total - caps))}) of the total were given to no file (the plan's reserve, plus files with no row)`,
      ...drift,
      `achieved PSNR: ${spreadText(written.filter((r) => r.psnr !== undefined).map((r) => r.psnr!))}`,
    ],
    over: sum > total,
  };
}
