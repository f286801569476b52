/**
 * What a batch run takes and gives (`runBatch` in run.ts), and the context every step of one run reads.
 */
import type { BatchEvent, BatchRow, BatchSummary, CompressOptions, Shard, TotalSize } from '../../contract';
import type { Favour } from './allocate';
import type { Plan } from './plan';
import type { BatchFiles } from './summary';
import type { BatchCounts } from './tally';

/** Default per-file limit: 30 minutes, far above a 300-megapixel scan on one core. */
export const DEFAULT_TIMEOUT_MS = 30 * 60 * 1000;

export interface BatchRunOptions {
  inDir: string;
  outDir: string;
  compress: CompressOptions;
  /** Worker threads. Default: the number of cores. */
  jobs?: number;
  /**
   * libvips threads while the run lasts. libvips' pool is process-wide and shared by every worker, so with 1
   * batch parallelism comes from `jobs` alone and throughput scales with the job count (docs/cli.md, batch).
   * The setting the process had comes back when the run returns. Default: leave it as it is.
   */
  libvipsThreads?: number;
  include?: string[];
  exclude?: string[];
  shard?: Shard;
  resume?: boolean;
  dryRun?: boolean;
  /** Overwrite existing outputs. */
  force?: boolean;
  expandCheck?: boolean;
  /** Per-file limit in ms; 0 = none. */
  timeoutMs?: number;
  /** Manifest path; default OUT_DIR/rankfold-manifest[-IofN].jsonl. The CSV sits beside it. */
  manifest?: string;
  /** HTML report path; default beside the manifest. */
  report?: string;
  /** Built worker file (dist/workers/batch.js). */
  workerFile: string | URL;
  /**
   * `--total`: the .rkf files together take at most this (docs/cli.md, batch). `compress.budget` is then
   * ignored: each file gets a byte budget from the plan.
   */
  total?: TotalSize;
  /** How the total is shared: `floor` (equal quality, default) or `mean` (equal slopes). */
  favour?: Favour;
  /** `--min-psnr` with `--total`: refuse, before writing anything, a total that cannot give every file this. */
  minPsnr?: number;
  /** `--survey`: measure the files' rate–quality curves and write the survey manifest only. */
  surveyOnly?: boolean;
  /** `--plan plan.json`: encode each file at the bytes this shared plan allots (made by `batch --plan`). */
  planFile?: string;
  /** Called when a file is handed to a worker (the app shows its row as it starts). */
  onFileStart?: (path: string) => void;
  /** `--total`, `--survey`: called as each file's survey ends (`done` of `total`), with what it measured. */
  onSurvey?: (done: number, total: number, file?: SurveyedFile) => void;
  /** Called with one line of news about the survey and the plan. */
  onNote?: (text: string) => void;
  /** Called for every event (start, each file, end). */
  onEvent?: (e: BatchEvent) => void;
  /** Called when a job reports progress, with bytes of input finished so far. */
  onProgress?: (p: BatchCounts) => void;
  /** Abort: queued files are not started, running ones are stopped; finished rows are kept. */
  signal?: AbortSignal;
}

export interface BatchResult {
  summary: BatchSummary;
  rows: BatchRow[];
  /** Non-fatal problems: folders that could not be listed, manifest/report write errors. */
  warnings: string[];
  /** Remarks that lose nothing, e.g. a stale lock of a dead run that was taken over. */
  notices: string[];
  interrupted: boolean;
  /** `--total` or `--plan`: the plan's figures. */
  collection?: import('./collection').CollectionInfo;
}

/** What every step of one run reads; `warnings` and `notices` collect as it goes. */
export interface Run {
  o: BatchRunOptions;
  inDir: string;
  outDir: string;
  shardLabel: string;
  plan: Plan;
  jobs: number;
  files: BatchFiles;
  settings: string;
  timeoutMs: number;
  warnings: string[];
  notices: string[];
  started: number;
  /** `--total` or `--plan`: the plan's figures, for the summary and the report. */
  collection?: import('./collection').CollectionInfo;
  /** `--plan plan.json`: the shared plan, read when the run starts. */
  sharedPlan?: import('./plan-file').SharedPlan;
  /** `--total` or `--plan`: each file's byte cap. */
  allotter?: import('./allot').Allotter;
}

/** One file's survey as it ends: its path, and its predicted PSNR range, or why it was not measured. */
export interface SurveyedFile {
  path: string;
  /** Lowest and highest PSNR of its measured points (dB). */
  psnr?: [number, number];
  /** The survey's error message, when it could not be measured. */
  error?: string;
}
