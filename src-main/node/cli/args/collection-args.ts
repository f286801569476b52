/**
 * The collection options of `rankfold batch` (issue #13): `--total SIZE`, `--favour floor|mean`,
 * `--min-psnr DB` as a guard, `--survey`, `--plan`, `--reserve P`. Ranges and words come from the contract's
 * declarations (OPTIONS.totalBytes, totalPercent, favour, reserve, minPsnr).
 */
import { OPTIONS, parseOptionText, parseTotalText, type TotalSize, UsageError } from '../../../contract';
import type { Favour } from '../../batch/allocate';
import { flags, type OptionSpec } from './command';

export const COLLECTION_OPTIONS: OptionSpec = flags('total favour plan reserve', 'survey');

export interface CollectionArgs {
  total?: TotalSize;
  favour?: Favour;
  minPsnr?: number;
  surveyOnly?: boolean;
  planFile?: string;
}

/** `batch --plan SURVEY.json… --total SIZE -o plan.json`: make a shared plan. */
export interface ParsedPlan {
  mode: 'plan';
  surveys: string[];
  total: TotalSize;
  favour: Favour;
  minPsnr?: number;
  reservePercent: number;
  output: string;
  json: boolean;
}

const str = (v: unknown) => (typeof v === 'string' ? v : undefined);

/** True when argv asks to make a shared plan (`--plan` with `--total` and no input folder). */
export const isPlanMaking = (values: Record<string, unknown>) =>
  values.plan !== undefined && values.total !== undefined;

/** Parse `batch --plan SURVEY… --total SIZE -o plan.json`. @throws UsageError */
export function parsePlanArgs(values: Record<string, unknown>, positionals: string[]): ParsedPlan {
  const output = str(values.output);
  if (!output || !/\.json$/i.test(output))
    throw new UsageError('--plan … --total SIZE: give the plan file to write with -o plan.json');
  return {
    mode: 'plan',
    surveys: [str(values.plan)!, ...positionals],
    total: parseTotalText(str(values.total) ?? ''),
    favour: parseOptionText(OPTIONS.favour, str(values.favour) ?? 'floor'),
    minPsnr:
      values['min-psnr'] !== undefined
        ? parseOptionText(OPTIONS.minPsnr, str(values['min-psnr']))
        : undefined,
    reservePercent:
      values.reserve !== undefined
        ? parseOptionText(OPTIONS.reserve, str(values.reserve))
        : (OPTIONS.reserve.default ?? 1),
    output,
    json: Boolean(values.json),
  };
}

/**
 * The collection options of a run, or undefined when none is given. With one of them, the per-file budget
 * options are refused (--min-psnr stays, as a guard on the total).
 * @throws UsageError
 */
export function parseCollectionArgs(values: Record<string, unknown>): CollectionArgs | undefined {
  const given = ['total', 'survey', 'plan'].filter((k) => values[k] !== undefined && values[k] !== false);
  if (!given.length) {
    for (const k of ['favour', 'reserve'])
      if (values[k] !== undefined) throw new UsageError(`--${k} goes with --total SIZE`);
    return undefined;
  }
  if (given.length > 1)
    throw new UsageError(
      `give one of --total, --survey and --plan, not ${given.map((g) => `--${g}`).join(' and ')}`,
    );
  const perFile = ['rank', 'budget', 'bpp', 'min-ssim'].filter((k) => values[k] !== undefined);
  if (perFile.length)
    throw new UsageError(
      `--${given[0]} plans every file's size itself; it does not take ${perFile.map((k) => `--${k}`).join(', ')} (--min-psnr DB is kept as a guard)`,
    );
  if (values.reserve !== undefined)
    throw new UsageError('--reserve goes with --plan … --total SIZE -o plan.json');
  if (values.favour !== undefined && !values.total) throw new UsageError('--favour goes with --total SIZE');
  const plan = str(values.plan);
  if (plan !== undefined && !/\.json$/i.test(plan))
    throw new UsageError(
      `--plan takes the plan file made by batch --plan … --total SIZE -o plan.json, not ${JSON.stringify(plan)}`,
    );
  return {
    total: values.total !== undefined ? parseTotalText(str(values.total) ?? '') : undefined,
    favour: values.favour !== undefined ? parseOptionText(OPTIONS.favour, str(values.favour)) : undefined,
    minPsnr:
      values['min-psnr'] !== undefined
        ? parseOptionText(OPTIONS.minPsnr, str(values['min-psnr']))
        : undefined,
    surveyOnly: values.survey === true ? true : undefined,
    planFile: plan,
  };
}
