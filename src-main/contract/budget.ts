/**
 * The one validator of compress budgets, tiles and options, used alike by the CLI parsers (after reading
 * the text), the IPC and HTTP entry points and the services. Ranges come from ./options.
 */
import type { Budget, CompressOptions, TileChoice } from './compress';
import { UsageError } from './errors';
import { checkOption, checkOptional, type NumberOption, OPTIONS } from './options';
import { checkOneOf, invalidParameterError, is } from './validate';

const BUDGET_KINDS = ['rank', 'bytes', 'percent', 'bpp', 'psnr', 'ssim'] as const;

/** Per budget kind: the field holding its value and the option that declares its range. */
const BUDGET_FIELDS = {
  rank: ['rank', OPTIONS.rank],
  bytes: ['bytes', OPTIONS.budgetBytes],
  percent: ['percent', OPTIONS.budgetPercent],
  bpp: ['bpp', OPTIONS.bpp],
  psnr: ['db', OPTIONS.minPsnr],
  ssim: ['value', OPTIONS.minSsim],
} as const satisfies Record<Budget['kind'], readonly [string, NumberOption]>;

/** Refuse fields a request object may not carry. */
export function checkFields(name: string, v: unknown, allowed: readonly string[]): Record<string, unknown> {
  if (!is.plainObject(v)) throw invalidParameterError(name, 'an object', v);
  for (const k of Object.keys(v))
    if (!allowed.includes(k))
      throw new UsageError(`Unexpected field "${k}" in ${name}; allowed: ${allowed.join(', ')}`);
  return v;
}

/**
 * Check a budget object. `rank` overrides the declaration of a rank budget (stack mode counts eigen-frames,
 * {@link OPTIONS.stackRank}).
 */
export function checkBudget(v: unknown, rank: NumberOption = OPTIONS.rank): Budget {
  if (!is.plainObject(v)) throw invalidParameterError('budget', 'an object', v);
  const kind = checkOneOf('budget.kind', v.kind, BUDGET_KINDS);
  const [field, decl] = BUDGET_FIELDS[kind];
  checkFields('budget', v, ['kind', field]);
  return { kind, [field]: checkOption(kind === 'rank' ? rank : decl, v[field]) } as Budget;
}

/** `tile`: 'auto', 0 (whole planes) or a side of 16–512 pixels. */
export function checkTile(v: unknown): TileChoice {
  if (v === 'auto' || v === 0) return v;
  return checkOption(OPTIONS.tile, v);
}

/** Check the options of `compress` (the fields the contract declares; flags such as force pass as given). */
export function checkCompressOptions<T extends CompressOptions>(o: T): T {
  if (!is.plainObject(o)) throw invalidParameterError('options', 'an object', o);
  checkBudget(o.budget);
  checkTile(o.tile);
  checkOptional(OPTIONS.layers, o.layers);
  if (o.lossless !== undefined && !is.bool(o.lossless))
    throw invalidParameterError('lossless', 'true or false', o.lossless);
  checkOptional(OPTIONS.page, o.page);
  checkOptional(OPTIONS.pixelLimit, o.pixelLimit);
  return o;
}

const SIZE_UNITS: Record<string, number> = {
  b: 1,
  kb: 1e3,
  mb: 1e6,
  gb: 1e9,
  tb: 1e12,
  kib: 1024,
  mib: 1024 ** 2,
  gib: 1024 ** 3,
  tib: 1024 ** 4,
};

/**
 * Parse `--budget` text: `250kB`, `1.5MB`, `2MiB`, `120000` (bytes) or `5%` (of the raw sample bytes).
 * kB/MB/GB are decimal (SI); KiB/MiB/GiB are binary (IEC 80000-13). The value read is then checked as a
 * request's would be, so `0.0005%` and `10` get the same refusal here as over IPC or HTTP.
 * @throws UsageError with the exact text it could not read.
 */
export function parseBudgetText(text: string): Budget {
  const v = readSizeText(text, 'budget', '250kB, 1.5MB, 2MiB or 5%');
  return checkBudget('percent' in v ? { kind: 'percent', ...v } : { kind: 'bytes', ...v });
}

/** `5%` → { percent: 5 }; `1.5MB` → { bytes: 1500000 }. @throws UsageError naming `what` and the text. */
function readSizeText(text: string, what: string, examples: string): { percent: number } | { bytes: number } {
  const t = text.trim();
  const pct = /^(\d+(?:\.\d+)?)\s*%$/.exec(t);
  if (pct) return { percent: Number(pct[1]) };
  const m = /^(\d+(?:\.\d+)?)\s*([a-zA-Z]*)$/.exec(t);
  const unit = m ? (m[2] || 'b').toLowerCase() : '';
  if (!m || !(unit in SIZE_UNITS))
    throw new UsageError(
      `Expected a size such as ${examples} for ${what} but received ${JSON.stringify(text)}`,
    );
  return { bytes: Math.floor(Number(m[1]) * SIZE_UNITS[unit]) };
}

/** A batch's total for the whole collection (issue #13): bytes, or a share of the raw samples of all inputs. */
export type TotalSize = { kind: 'bytes'; bytes: number } | { kind: 'percent'; percent: number };

/** Check a total object, as a request carries it. @throws UsageError in the one format. */
export function checkTotal(v: unknown): TotalSize {
  if (!is.plainObject(v)) throw invalidParameterError('total', 'an object', v);
  const kind = checkOneOf('total.kind', v.kind, ['bytes', 'percent'] as const);
  checkFields('total', v, ['kind', kind]);
  return kind === 'bytes'
    ? { kind, bytes: checkOption(OPTIONS.totalBytes, v.bytes) }
    : { kind, percent: checkOption(OPTIONS.totalPercent, v.percent) };
}

/**
 * Parse `--total` text: `2TB`, `40GB`, `250MB`, `120000` (bytes) or `5%` (of the raw samples of all inputs).
 * kB/MB/GB/TB are decimal (SI: 1 GB = 10⁹ bytes); KiB…TiB are binary (IEC 80000-13).
 * @throws UsageError with the exact text it could not read.
 */
export function parseTotalText(text: string): TotalSize {
  const v = readSizeText(text, 'total', '2TB, 40GB, 250MB, 120000 or 5%');
  return checkTotal('percent' in v ? { kind: 'percent', ...v } : { kind: 'bytes', ...v });
}
