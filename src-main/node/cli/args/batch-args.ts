/**
 * Arguments of `rankfold batch`, parsed into a {@link BatchRunOptions} (without the callbacks) or a merge
 * request. Kept apart from the command so tests (and docs/scale.md's examples) can parse without running.
 */
import { availableParallelism } from 'node:os';
import {
  type CompressOptions,
  OPTIONS,
  parseOptionText,
  parseShardText,
  type Shard,
  type TileChoice,
  UsageError,
} from '../../../contract';
import { DEFAULT_TIMEOUT_MS } from '../../batch/run-options';
import { DEFAULT_PIXEL_LIMIT } from '../../image/decode';
import {
  BUDGET_OPTION_NAMES,
  BUDGET_OPTIONS,
  parseBudgetOrLossless,
  parseTileOption,
} from './budget-options';
import {
  COLLECTION_OPTIONS,
  type CollectionArgs,
  isPlanMaking,
  type ParsedPlan,
  parseCollectionArgs,
  parsePlanArgs,
} from './collection-args';
import { flags, type OptionSpec, parseCommandArgs } from './command';

const BATCH_OPTIONS: OptionSpec = {
  ...BUDGET_OPTIONS,
  ...COLLECTION_OPTIONS,
  ...flags(
    'output tile pixel-limit report manifest timeout shard',
    'resume force dry-run json expand-check merge lossless',
  ),
  jobs: { type: 'string', short: 'j' },
  include: { type: 'string', multiple: true },
  exclude: { type: 'string', multiple: true },
};

/** Default tile choice when --tile is not given. */
const DEFAULT_TILE: TileChoice = 'auto';

export interface ParsedBatch extends CollectionArgs {
  mode: 'run';
  inDir: string;
  outDir: string;
  compress: CompressOptions;
  jobs: number;
  include: string[];
  exclude: string[];
  shard: Shard;
  resume: boolean;
  force: boolean;
  dryRun: boolean;
  json: boolean;
  expandCheck: boolean;
  timeoutMs: number;
  report?: string;
  manifest?: string;
}

export interface ParsedMerge {
  mode: 'merge';
  manifests: string[];
  outDir?: string;
  report?: string;
  manifest?: string;
  json: boolean;
}

const str = (v: unknown) => (typeof v === 'string' ? v : undefined);

/** Parse `rankfold batch …` argv. @throws UsageError */
export function parseBatchArgs(argv: string[]): ParsedBatch | ParsedMerge | ParsedPlan {
  const { values, positionals } = parseCommandArgs('batch', argv, BATCH_OPTIONS, Number.POSITIVE_INFINITY);
  if (!values.merge && isPlanMaking(values)) return parsePlanArgs(values, positionals);
  if (values.merge) {
    if (!positionals.length)
      throw new UsageError('--merge: give one or more shard manifests (rankfold-manifest-*.jsonl)');
    const bad = [
      ...BUDGET_OPTION_NAMES,
      ...['tile', 'resume', 'shard', 'dry-run', 'expand-check', 'jobs'],
      ...['total', 'favour', 'plan', 'survey', 'reserve'],
    ].filter((k) => values[k] !== undefined);
    if (bad.length)
      throw new UsageError(
        `--merge only joins manifests; it does not take ${bad.map((b) => `--${b}`).join(', ')}`,
      );
    return {
      mode: 'merge',
      manifests: positionals,
      outDir: str(values.output),
      report: str(values.report),
      manifest: str(values.manifest),
      json: Boolean(values.json),
    };
  }
  if (positionals.length !== 1)
    throw new UsageError(
      positionals.length
        ? `give one input folder, not ${positionals.length} (${positionals.join(' ')}). See \`rankfold batch --help\`.`
        : 'give an input folder: rankfold batch IN_DIR -o OUT_DIR. See `rankfold batch --help`.',
    );
  const outDir = str(values.output);
  if (!outDir) throw new UsageError('give an output folder with -o OUT_DIR (outside the input folder)');
  if (values.resume && values.force)
    throw new UsageError('--resume keeps matching outputs and --force rewrites them all; give one of them');
  const collection = parseCollectionArgs(values);
  // A collection plans each file's byte budget itself; this one only stands in until it does.
  const [budget] = collection
    ? [{ kind: 'percent' as const, percent: 100 }]
    : parseBudgetOrLossless(values, {
        missing:
          'give one budget: --rank K, --budget SIZE (e.g. 250kB or 5%), --bpp X, --min-psnr DB or --min-ssim S, or a --total SIZE for the whole folder',
      });
  if (collection && values.lossless)
    throw new UsageError(
      '--lossless writes every file exactly; a --total for the folder cannot be planned with it',
    );
  const compress: CompressOptions = {
    budget,
    ...(values.lossless ? { lossless: true } : {}),
    tile: values.tile === undefined ? DEFAULT_TILE : parseTileOption(str(values.tile)),
    pixelLimit:
      values['pixel-limit'] !== undefined
        ? parseOptionText(OPTIONS.pixelLimit, str(values['pixel-limit']))
        : DEFAULT_PIXEL_LIMIT,
  };
  const jobs =
    values.jobs !== undefined ? parseOptionText(OPTIONS.jobs, str(values.jobs)) : availableParallelism();
  const timeoutMs =
    values.timeout !== undefined
      ? Math.round(parseOptionText(OPTIONS.timeout, str(values.timeout)) * 1000)
      : DEFAULT_TIMEOUT_MS;
  const report = str(values.report);
  if (report !== undefined && !/\.html?$/i.test(report))
    throw new UsageError(`--report takes an .html file name, not ${JSON.stringify(report)}`);
  const manifest = str(values.manifest);
  if (manifest !== undefined && !/\.jsonl$/i.test(manifest))
    throw new UsageError(`--manifest takes a .jsonl file name, not ${JSON.stringify(manifest)}`);
  return {
    ...collection,
    mode: 'run',
    inDir: positionals[0],
    outDir,
    compress,
    jobs,
    include: (values.include as string[] | undefined) ?? [],
    exclude: (values.exclude as string[] | undefined) ?? [],
    shard: values.shard !== undefined ? parseShardText(str(values.shard) ?? '') : { index: 0, count: 1 },
    resume: Boolean(values.resume),
    force: Boolean(values.force),
    dryRun: Boolean(values['dry-run']),
    json: Boolean(values.json),
    expandCheck: Boolean(values['expand-check']),
    timeoutMs,
    report,
    manifest,
  };
}
