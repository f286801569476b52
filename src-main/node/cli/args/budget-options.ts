/**
 * The budget options of `rankfold compress`, `rankfold compress --stack` and `rankfold batch` (--rank,
 * --budget, --bpp, --min-psnr, --min-ssim), declared and parsed in one place. Where the commands differ,
 * they say so through {@link BudgetOptionRules}.
 */
import {
  type Budget,
  checkTile,
  type NumberOption,
  OPTIONS,
  optionValue,
  parseBudgetText,
  parseOptionText,
  type TileChoice,
  UsageError,
} from '../../../contract';
import { flags, type OptionSpec } from './command';

/** The budget options, in the order messages name them. */
export const BUDGET_OPTION_NAMES = ['rank', 'budget', 'bpp', 'min-psnr', 'min-ssim'] as const;
type BudgetOptionName = (typeof BUDGET_OPTION_NAMES)[number];

/** Their parseArgs declarations, to spread into a command's options. */
export const BUDGET_OPTIONS: OptionSpec = flags(BUDGET_OPTION_NAMES.join(' '));

/** How one command reads its budget options. */
export interface BudgetOptionRules {
  /** Put before the parser's own messages, e.g. 'compress: ' (default none). Not before `missing`. */
  prefix?: string;
  /** The whole message when no budget option is given. */
  missing: string;
  /** The declaration of --rank (default {@link OPTIONS.rank}; stack mode counts eigen-frames). */
  rank?: NumberOption;
  /**
   * false (default): exactly one of the five options. true (stack mode): at most one of --rank, --budget
   * and --bpp; --min-psnr and --min-ssim are floors that may be given together and with --budget or --bpp,
   * but not with --rank.
   */
  floorsCombine?: boolean;
}

const isFloor = (k: BudgetOptionName) => k === 'min-psnr' || k === 'min-ssim';

/** The floors are read first, so that their errors come before those of --rank, --budget or --bpp. */
const READ_ORDER: readonly BudgetOptionName[] = ['min-psnr', 'min-ssim', 'rank', 'budget', 'bpp'];

function parseOne(k: BudgetOptionName, text: string | undefined, rules: BudgetOptionRules): Budget {
  switch (k) {
    case 'rank':
      return { kind: 'rank', rank: parseOptionText(rules.rank ?? OPTIONS.rank, text) };
    case 'budget':
      return parseBudgetText(text ?? '');
    case 'bpp':
      return { kind: 'bpp', bpp: parseOptionText(OPTIONS.bpp, text) };
    case 'min-psnr':
      return { kind: 'psnr', db: parseOptionText(OPTIONS.minPsnr, text) };
    default:
      return { kind: 'ssim', value: parseOptionText(OPTIONS.minSsim, text) };
  }
}

/**
 * Read the budget options from parsed argv `values`. Returns the budgets given: exactly one, or with
 * `floorsCombine` the floors (--min-psnr as kind 'psnr', then --min-ssim as kind 'ssim') followed by the
 * one --rank, --budget or --bpp, if any.
 * @throws UsageError
 */
export function parseBudgetOptions(values: Record<string, unknown>, rules: BudgetOptionRules): Budget[] {
  const prefix = rules.prefix ?? '';
  const given = BUDGET_OPTION_NAMES.filter((k) => values[k] !== undefined);
  const exclusive = rules.floorsCombine ? given.filter((k) => !isFloor(k)) : given;
  if (exclusive.length > 1) {
    const names = exclusive.map((g) => `--${g}`).join(' and ');
    throw new UsageError(
      rules.floorsCombine
        ? `${prefix}give only one of ${names}`
        : `${prefix}give only one budget, not ${names}`,
    );
  }
  if (given.length === 0) throw new UsageError(rules.missing);
  const budgets = READ_ORDER.filter((k) => values[k] !== undefined).map((k) => {
    const v = values[k];
    return parseOne(k, typeof v === 'string' ? v : undefined, rules);
  });
  if (budgets.length > 1 && budgets.some((b) => b.kind === 'rank'))
    throw new UsageError(
      `${prefix}--rank fixes the model; combine --min-psnr or --min-ssim with --budget or --bpp instead`,
    );
  return budgets;
}

/**
 * What `--lossless` stands for when no budget option is given: a PSNR floor at the top of its range, which
 * the lossless file (PSNR ∞) meets. The encoder writes the lossless file with no lossy search either way.
 */
const LOSSLESS_BUDGET: Budget = { kind: 'psnr', db: OPTIONS.minPsnr.max };

/** {@link parseBudgetOptions}, except that with `--lossless` the budget may be left out. @throws UsageError */
export function parseBudgetOrLossless(values: Record<string, unknown>, rules: BudgetOptionRules): Budget[] {
  if (values.lossless && !BUDGET_OPTION_NAMES.some((k) => values[k] !== undefined)) return [LOSSLESS_BUDGET];
  return parseBudgetOptions(values, rules);
}

/** `--tile`: `auto`, `0` (whole planes) or a side of 16–512 pixels; spaces around it are ignored. */
export function parseTileOption(text: string | undefined): TileChoice {
  if (text === undefined || text.trim() === 'auto') return 'auto';
  return checkTile(optionValue(OPTIONS.tile, text));
}
