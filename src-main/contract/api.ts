/**
 * The page's API as types: requests, results, events, and the {@link RankfoldApi} interface that the
 * Electron preload (IPC) and the browser-mode client (HTTP + SSE) both implement. Which transports carry
 * each call, and how its payload is checked, is declared once in ./methods.
 *
 * Binary factor sets (σ, U, V and the source planes) travel once per scan in the layout of
 * {@link encodeFactorSet} (./factor-set); the page rebuilds any rank from them itself.
 */

import type { Budget, CompressReport, TileChoice } from './compress';

/** Where a scan comes from. */
type ScanSource =
  | { kind: 'path'; path: string }
  | { kind: 'sample'; name: string }
  | { kind: 'upload'; uploadId: string };

export interface OpenScanRequest {
  source: ScanSource;
  /** TIFF page (0-based). */
  page?: number;
}

/** What the page shows about an opened scan. */
export interface ScanSummary {
  scanId: string;
  name: string;
  width: number;
  height: number;
  channels: 1 | 2 | 3 | 4;
  bitDepth: 8 | 16;
  colour: 'gray' | 'rgb';
  inputBytes: number;
  rawBytes: number;
  format: string;
}

export interface FactorRequest {
  scanId: string;
  /** Largest rank to compute per plane. */
  maxRank: number;
  /** Client-chosen job id, for progress events and cancel. */
  job: string;
  /** Run on the scan's background lane (a refinement), so encodes are not held up behind it. */
  background?: boolean;
}

export interface EvaluateRequest {
  scanId: string;
  budget: Budget;
  tile: TileChoice;
  job: string;
}

/** Per-tile ranks of one channel, row-major over the tile grid (tiled mode). */
export interface TileRankMap {
  channel: string;
  tile: number;
  cols: number;
  rows: number;
  ranks: number[];
}

/** The encoder's real figures at a budget: exactly what `rankfold compress --json` prints for that budget. */
export interface EvaluateResult {
  report: CompressReport;
  tileRanks?: TileRankMap[];
  /** Tiled mode: the decoded result as planes (`rec.p` blocks), fetched with `fetchImages`. */
  previewId?: string;
}

export interface CleanSettings {
  /** Sensor-noise removal: 'off', 'auto' (estimated threshold) or a fixed noise σ in grey levels. */
  noise: 'off' | 'auto' | number;
  /** Row/column banding removal ('auto' detects the direction). */
  banding: 'auto' | 'off' | 'rows' | 'columns' | 'both';
}

export interface CleanRequest {
  scanId: string;
  settings: CleanSettings;
  job: string;
}

/** Summary of a clean run; the cleaned and removed planes come with {@link CleanResult.imagesId}. */
export interface CleanResult {
  /** Handle of the binary planes (cleaned + removed, f32) in the {@link encodeFactorSet} layout. */
  imagesId: string;
  /** Whatever figures the cleaning service reports (noise estimate, threshold, stripe index, …). */
  report: Record<string, unknown>;
  /** Mean of the removed part per column (vertical stripes) and per row (horizontal bands), first channel. */
  profile: { columns: number[]; rows: number[] };
}

export type SaveKind = 'rkf' | 'expanded' | 'cleaned' | 'removed';

export interface SaveRequest {
  scanId: string;
  kind: SaveKind;
  budget: Budget;
  tile: TileChoice;
  settings?: CleanSettings;
  /** Where to write (Electron save dialog, or a path the user typed in browser mode). Omit to download. */
  path?: string;
  force?: boolean;
  job: string;
}

export interface SaveResult {
  /** Path written, when written on this machine. */
  path?: string;
  /** Handle for a download, in browser mode when no path was given. */
  downloadId?: string;
  fileName: string;
  bytes: number;
  caution: string;
}

export interface BatchRequest {
  input: string;
  output: string;
  budget: Budget;
  tile: TileChoice;
  force?: boolean;
  job: string;
  /** A total for the whole folder (issue #13): `budget` is then ignored, each file gets its share. */
  total?: import('./budget').TotalSize;
  /** With `total`: survey and plan only, write nothing; each file's `psnr` is the predicted one. */
  dryRun?: boolean;
}

export interface BatchFileStatus {
  file: string;
  state: 'queued' | 'running' | 'done' | 'failed' | 'skipped';
  message?: string;
  outputBytes?: number;
  psnr?: number;
}

export interface BatchResult {
  files: BatchFileStatus[];
  reportPath?: string;
  /** Handle to open the HTML report in the page (browser mode) or the system viewer (Electron). */
  reportId?: string;
  cancelled: boolean;
}

/** Something the user chose in a dialog or typed. */
export interface PickRequest {
  kind: 'file' | 'folder' | 'save';
  /** Suggested name or path. */
  suggested?: string;
}

export interface PickResult {
  path?: string;
}

export interface SampleInfo {
  name: string;
  title: string;
  bytes: number;
}

/** One frame of a stack file (`layout: "stack"`, written by `rankfold compress --stack`). */
export interface StackFrameRequest {
  /** A .rkf stack file the user opened or chose in this session. */
  path: string;
  /** 0-based frame index. */
  frame: number;
  /**
   * Where the frames the stack was made from are (a folder the user chose, or the multi-page TIFF):
   * the frame's original then comes back beside it (`orig.p` blocks), when it is the one that was stored.
   */
  originals?: string;
}

/** What the page shows about a stack and one of its frames; carried in the factor-set header as `stack`. */
export interface StackFrameInfo {
  name: string;
  frame: number;
  frameCount: number;
  frameNames: Array<string | null>;
  /** Eigen-frames stored per coded channel. */
  ranks: number[];
  /** Frame-mode singular values per coded channel ('gray', or 'Y', 'Cb', 'Cr'), from the header. */
  spectrum: { channel: string; sigma: number[] }[];
  /** Size of the whole stack file, and of its frames as raw samples. */
  fileBytes: number;
  rawBytes: number;
  bitDepth: 8 | 16;
  /** True when this frame carries a coded residual in some channel. */
  residual: boolean;
  /** This frame's PSNR (dB) and SSIM as recorded in the file (SQAL chunk); absent when the file does not record them. */
  psnr?: number;
  ssim?: number;
  /** The lowest recorded PSNR over all frames (dB) and its frame (0-based), when the file records PSNR. */
  worst?: { frame: number; psnr: number };
  /**
   * With `originals` asked for: whether this frame's original is in the set (`orig.p` blocks), and which
   * file it is or why it is not shown.
   */
  original?: { shown: boolean; note: string };
}

/** Progress of a long job; `done` of `total` in the job's own units (planes, files, passes). */
export interface ProgressEvent {
  job: string;
  stage: string;
  done: number;
  total: number;
  file?: string;
  message?: string;
}

export interface DroppedResult {
  path: string;
  kind: 'file' | 'folder';
}

/** Commands the desktop menu sends to the page. */
const MENU_COMMANDS = [
  'open',
  'open-folder',
  'save',
  'view-side',
  'view-swipe',
  'view-diff',
  'view-layer',
  'view-tiles',
  'zoom-fit',
  'zoom-1',
  'zoom-in',
  'zoom-out',
] as const;
export type MenuCommand = (typeof MENU_COMMANDS)[number];
