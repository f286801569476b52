/**
 * The page's API: one interface that the Electron preload (IPC) and the browser-mode client (HTTP + SSE)
 * both implement, plus the runtime validators that the IPC handlers and the HTTP server run on every
 * request before it reaches a service. The page cannot tell which transport it is on.
 *
 * Binary factor sets (σ, U, V and the source planes) travel once per scan in the layout of
 * {@link encodeFactorSet}; the page rebuilds any rank from them itself.
 */

import type { Budget, CompressReport, TileChoice } from './compress';
import { UsageError } from './errors';
import { utf8Decode, utf8Encode } from './utf8';
import {
  checkBool,
  checkInteger,
  checkNumber,
  checkOneOf,
  checkString,
  invalidParameterError,
  is,
} from './validate';

/** Where a scan comes from. */
export type ScanSource =
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

export type SaveKind = 'rkf' | 'expanded' | 'cleaned';

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

/** The API the page calls. Both transports implement it; every method rejects with a RankfoldError payload. */
export interface RankfoldApi {
  transport(): 'ipc' | 'http';
  listSamples(): Promise<SampleInfo[]>;
  listRecent(): Promise<string[]>;
  /** Upload bytes of a file the user picked in the page (browser mode); returns an upload id. */
  upload(name: string, bytes: ArrayBuffer): Promise<string>;
  pick(req: PickRequest): Promise<PickResult>;
  openScan(req: OpenScanRequest): Promise<ScanSummary>;
  /** σ, U, V of every plane plus the source planes, once, in the {@link encodeFactorSet} layout. */
  factors(req: FactorRequest): Promise<ArrayBuffer>;
  evaluate(req: EvaluateRequest): Promise<EvaluateResult>;
  clean(req: CleanRequest): Promise<CleanResult>;
  /** Planes kept on the back end (cleaned/removed, or a tiled preview), in the factor-set layout. */
  fetchImages(imagesId: string): Promise<ArrayBuffer>;
  /** One decoded frame of a stack file (`src.p` blocks) with the stack's summary in `header.stack`. */
  stackFrame(req: StackFrameRequest): Promise<ArrayBuffer>;
  save(req: SaveRequest): Promise<SaveResult>;
  batch(req: BatchRequest): Promise<BatchResult>;
  openReport(reportId: string): Promise<void>;
  cancel(job: string): Promise<void>;
  /** Subscribe to progress; returns an unsubscribe function. The callback never sees a transport event object. */
  onProgress(cb: (e: ProgressEvent) => void): () => void;
  /** Files dropped on or opened from the shell (menu, recent files, drag-drop in Electron). */
  onOpenPath(cb: (path: string) => void): () => void;
  /** Desktop only: a file or folder dropped on the window (a DOM File); the shell records it as chosen. */
  openDropped?(file: unknown): Promise<DroppedResult | undefined>;
  /** Desktop only: menu commands (open, save, view modes, zoom). */
  onMenuCommand?(cb: (command: MenuCommand) => void): () => void;
}

export interface DroppedResult {
  path: string;
  kind: 'file' | 'folder';
}

/** Commands the desktop menu sends to the page. */
export const MENU_COMMANDS = [
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

/** Request methods and their payload validators: the allow-list shared by IPC and HTTP. */
export const API_METHODS = [
  'listSamples',
  'listRecent',
  'pick',
  'openScan',
  'factors',
  'evaluate',
  'clean',
  'fetchImages',
  'stackFrame',
  'save',
  'batch',
  'openReport',
  'cancel',
  'dropped',
] as const;
export type ApiMethod = (typeof API_METHODS)[number];

// ---------------------------------------------------------------------------------------------------
// Validators. Each takes `unknown` from the wire and returns a typed value or throws UsageError in the
// one error format of ./validate.

const ID_RE = /^[A-Za-z0-9_-]{1,64}$/;
/** Largest rank a request may ask for (the longest side the decoder accepts is far above it). */
export const MAX_RANK = 4096;

function obj(name: string, v: unknown, allowed: readonly string[]): Record<string, unknown> {
  if (!is.plainObject(v)) throw invalidParameterError(name, 'an object', v);
  for (const k of Object.keys(v))
    if (!allowed.includes(k))
      throw new UsageError(`Unexpected field "${k}" in ${name}; allowed: ${allowed.join(', ')}`);
  return v;
}

export function checkId(name: string, v: unknown): string {
  if (!is.string(v) || !ID_RE.test(v))
    throw invalidParameterError(name, 'an id of 1–64 letters, digits, - or _', v);
  return v;
}

function checkPath(name: string, v: unknown): string {
  const p = checkString(name, v, 4096);
  if (p.includes('\0')) throw new UsageError(`Expected a path without NUL characters for ${name}`);
  return p;
}

export function checkBudget(v: unknown): Budget {
  if (!is.plainObject(v)) throw invalidParameterError('budget', 'an object', v);
  const kind = checkOneOf('budget.kind', v.kind, [
    'rank',
    'bytes',
    'percent',
    'bpp',
    'psnr',
    'ssim',
  ] as const);
  switch (kind) {
    case 'rank':
      obj('budget', v, ['kind', 'rank']);
      return { kind, rank: checkInteger('budget.rank', v.rank, 1, MAX_RANK) };
    case 'bytes':
      obj('budget', v, ['kind', 'bytes']);
      return { kind, bytes: checkInteger('budget.bytes', v.bytes, 64, Number.MAX_SAFE_INTEGER) };
    case 'percent':
      obj('budget', v, ['kind', 'percent']);
      return { kind, percent: checkNumber('budget.percent', v.percent, 0.001, 100) };
    case 'bpp':
      obj('budget', v, ['kind', 'bpp']);
      return { kind, bpp: checkNumber('budget.bpp', v.bpp, 0.001, 64) };
    case 'psnr':
      obj('budget', v, ['kind', 'db']);
      return { kind, db: checkNumber('budget.db', v.db, 1, 200) };
    default:
      obj('budget', v, ['kind', 'value']);
      return { kind: 'ssim', value: checkNumber('budget.value', v.value, 0, 1) };
  }
}

export function checkTile(v: unknown): TileChoice {
  if (v === 'auto') return v;
  if (v === 0) return 0;
  return checkInteger('tile', v, 16, 512);
}

export function checkCleanSettings(v: unknown): CleanSettings {
  const o = obj('settings', v, ['noise', 'banding']);
  const noise =
    o.noise === 'off' || o.noise === 'auto'
      ? o.noise
      : checkNumber('settings.noise', o.noise, 0.000001, 65535);
  return {
    noise,
    banding: checkOneOf('settings.banding', o.banding, ['auto', 'off', 'rows', 'columns', 'both'] as const),
  };
}

function checkSource(v: unknown): ScanSource {
  if (!is.plainObject(v)) throw invalidParameterError('source', 'an object', v);
  const kind = checkOneOf('source.kind', v.kind, ['path', 'sample', 'upload'] as const);
  if (kind === 'path')
    return { kind, path: checkPath('source.path', obj('source', v, ['kind', 'path']).path) };
  if (kind === 'sample') {
    const name = checkString('source.name', obj('source', v, ['kind', 'name']).name, 255);
    if (!/^[A-Za-z0-9._-]+$/.test(name) || name.startsWith('.'))
      throw invalidParameterError('source.name', 'a sample file name', name);
    return { kind, name };
  }
  return { kind, uploadId: checkId('source.uploadId', obj('source', v, ['kind', 'uploadId']).uploadId) };
}

/** Validators per method: payload in, typed request out. `undefined`-payload methods accept nothing. */
export const validators: { [M in ApiMethod]: (v: unknown) => unknown } = {
  listSamples: (v) => none('listSamples', v),
  listRecent: (v) => none('listRecent', v),
  pick: (v): PickRequest => {
    const o = obj('pick', v, ['kind', 'suggested']);
    return {
      kind: checkOneOf('kind', o.kind, ['file', 'folder', 'save'] as const),
      suggested: o.suggested === undefined ? undefined : checkPath('suggested', o.suggested),
    };
  },
  openScan: (v): OpenScanRequest => {
    const o = obj('openScan', v, ['source', 'page']);
    return {
      source: checkSource(o.source),
      page: o.page === undefined ? undefined : checkInteger('page', o.page, 0, 9999),
    };
  },
  factors: (v): FactorRequest => {
    const o = obj('factors', v, ['scanId', 'maxRank', 'job', 'background']);
    return {
      scanId: checkId('scanId', o.scanId),
      maxRank: checkInteger('maxRank', o.maxRank, 1, MAX_RANK),
      job: checkId('job', o.job),
      background: o.background === undefined ? undefined : checkBool('background', o.background),
    };
  },
  evaluate: (v): EvaluateRequest => {
    const o = obj('evaluate', v, ['scanId', 'budget', 'tile', 'job']);
    return {
      scanId: checkId('scanId', o.scanId),
      budget: checkBudget(o.budget),
      tile: checkTile(o.tile),
      job: checkId('job', o.job),
    };
  },
  clean: (v): CleanRequest => {
    const o = obj('clean', v, ['scanId', 'settings', 'job']);
    return {
      scanId: checkId('scanId', o.scanId),
      settings: checkCleanSettings(o.settings),
      job: checkId('job', o.job),
    };
  },
  fetchImages: (v): string => checkId('imagesId', v),
  stackFrame: (v): StackFrameRequest => {
    const o = obj('stackFrame', v, ['path', 'frame']);
    return { path: checkPath('path', o.path), frame: checkInteger('frame', o.frame, 0, 1_000_000) };
  },
  save: (v): SaveRequest => {
    const o = obj('save', v, ['scanId', 'kind', 'budget', 'tile', 'settings', 'path', 'force', 'job']);
    return {
      scanId: checkId('scanId', o.scanId),
      kind: checkOneOf('kind', o.kind, ['rkf', 'expanded', 'cleaned'] as const),
      budget: checkBudget(o.budget),
      tile: checkTile(o.tile),
      settings: o.settings === undefined ? undefined : checkCleanSettings(o.settings),
      path: o.path === undefined ? undefined : checkPath('path', o.path),
      force: o.force === undefined ? undefined : checkBool('force', o.force),
      job: checkId('job', o.job),
    };
  },
  batch: (v): BatchRequest => {
    const o = obj('batch', v, ['input', 'output', 'budget', 'tile', 'force', 'job']);
    return {
      input: checkPath('input', o.input),
      output: checkPath('output', o.output),
      budget: checkBudget(o.budget),
      tile: checkTile(o.tile),
      force: o.force === undefined ? undefined : checkBool('force', o.force),
      job: checkId('job', o.job),
    };
  },
  openReport: (v): string => checkId('reportId', v),
  cancel: (v): string => checkId('job', v),
  dropped: (v): string => checkPath('path', v),
};

function none(name: string, v: unknown): undefined {
  if (v !== undefined && v !== null && !(is.plainObject(v) && Object.keys(v).length === 0))
    throw new UsageError(`${name} takes no arguments`);
  return undefined;
}

export function isApiMethod(v: unknown): v is ApiMethod {
  return is.string(v) && (API_METHODS as readonly string[]).includes(v);
}

/** Validate one request: the method must be on the allow-list and its payload must pass its validator. */
export function validateRequest(method: unknown, payload: unknown): { method: ApiMethod; payload: unknown } {
  if (!isApiMethod(method)) throw new UsageError(`Unknown API method ${JSON.stringify(method)}`);
  return { method, payload: validators[method](payload) };
}

// ---------------------------------------------------------------------------------------------------
// Binary factor sets.

/** One typed-array block in a factor set. */
export interface BlockInfo {
  name: string;
  type: 'f32' | 'u8' | 'u16';
  length: number;
  /** Byte offset from the start of the data area (after the header), 8-aligned. */
  offset: number;
}

/** Header of a factor set. Per plane `p`: blocks `sigma.p` (k), `u.p` (k·height, vector i contiguous), `v.p` (k·width), `src.p`. */
export interface FactorSetHeader {
  width: number;
  height: number;
  channels: string[];
  /** Rank stored per plane. */
  ranks: number[];
  /** ‖A‖_F² per plane, so the tail energy is known for every k ≤ rank. */
  energy: number[];
  /** Peak value of the source scale (255 or 65535). */
  peak: number;
  /** True when the stored rank is the full rank min(width, height). */
  complete: boolean;
  /** Full spectra when computed (`spectrum.p` blocks). */
  blocks: BlockInfo[];
  /** Set when the planes are one frame of a stack file. */
  stack?: StackFrameInfo;
}

export type FactorArrays = Record<string, Float32Array | Uint8Array | Uint16Array>;

const MAGIC = 0x52464b31; // 'RFK1'

/** Pack a header and typed arrays: u32 magic, u32 header length, UTF-8 JSON header, pad to 8, blocks (8-aligned). */
export function encodeFactorSet(header: Omit<FactorSetHeader, 'blocks'>, arrays: FactorArrays): Uint8Array {
  const blocks: BlockInfo[] = [];
  let off = 0;
  for (const [name, a] of Object.entries(arrays)) {
    const type = a instanceof Float32Array ? 'f32' : a instanceof Uint16Array ? 'u16' : 'u8';
    blocks.push({ name, type, length: a.length, offset: off });
    off += Math.ceil(a.byteLength / 8) * 8;
  }
  const json = utf8Encode(JSON.stringify({ ...header, blocks }));
  const headLen = 8 + Math.ceil(json.length / 8) * 8;
  const out = new Uint8Array(headLen + off);
  const dv = new DataView(out.buffer);
  dv.setUint32(0, MAGIC, true);
  dv.setUint32(4, json.length, true);
  out.set(json, 8);
  for (const b of blocks) {
    const a = arrays[b.name];
    out.set(new Uint8Array(a.buffer, a.byteOffset, a.byteLength), headLen + b.offset);
  }
  return out;
}

/** Unpack {@link encodeFactorSet} output without copying the blocks. @throws UsageError on a malformed set. */
export function decodeFactorSet(buf: ArrayBuffer): { header: FactorSetHeader; arrays: FactorArrays } {
  if (buf.byteLength < 8) throw new UsageError('factor set is truncated (under 8 bytes)');
  const dv = new DataView(buf);
  if (dv.getUint32(0, true) !== MAGIC) throw new UsageError('factor set has a wrong magic number');
  const len = dv.getUint32(4, true);
  if (8 + len > buf.byteLength) throw new UsageError('factor set header is truncated');
  const header = JSON.parse(utf8Decode(new Uint8Array(buf, 8, len))) as FactorSetHeader;
  const headLen = 8 + Math.ceil(len / 8) * 8;
  const arrays: FactorArrays = {};
  for (const b of header.blocks) {
    const size = b.type === 'f32' ? 4 : b.type === 'u16' ? 2 : 1;
    if (headLen + b.offset + b.length * size > buf.byteLength)
      throw new UsageError(`factor set block ${b.name} is truncated`);
    const Ctor = b.type === 'f32' ? Float32Array : b.type === 'u16' ? Uint16Array : Uint8Array;
    arrays[b.name] = new Ctor(buf, headLen + b.offset, b.length);
  }
  return { header, arrays };
}
