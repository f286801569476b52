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
  checkOptional(OPTIONS.page, o.page);
  checkOptional(OPTIONS.pixelLimit, o.pixelLimit);
  return o;
}

const SIZE_UNITS: Record<string, number> = {
  b: 1,
  kb: 1e3,
  mb: 1e6,
  gb: 1e9,
  kib: 1024,
  mib: 1024 ** 2,
  gib: 1024 ** 3,
};

/**
 * Parse `--budget` text: `250kB`, `1.5MB`, `2MiB`, `120000` (bytes) or `5%` (of the raw sample bytes).
 * kB/MB/GB are decimal (SI); KiB/MiB/GiB are binary (IEC 80000-13). The value read is then checked as a
 * request's would be, so `0.0005%` and `10` get the same refusal here as over IPC or HTTP.
 * @throws UsageError with the exact text it could not read.
 */
export function parseBudgetText(text: string): Budget {
  const t = text.trim();
  const pct = /^(\d+(?:\.\d+)?)\s*%$/.exec(t);
  if (pct) return checkBudget({ kind: 'percent', percent: Number(pct[1]) });
  const m = /^(\d+(?:\.\d+)?)\s*([a-zA-Z]*)$/.exec(t);
  const unit = m ? (m[2] || 'b').toLowerCase() : '';
  if (!m || !(unit in SIZE_UNITS))
    throw new UsageError(
      `Expected a size such as 250kB, 1.5MB, 2MiB or 5% for budget but received ${JSON.stringify(text)}`,
    );
  return checkBudget({ kind: 'bytes', bytes: Math.floor(Number(m[1]) * SIZE_UNITS[unit]) });
}
