/**
 * The page's sentences and labels built from data: scan and stack summaries, status lines, pane labels,
 * the stack card, the clean report and batch rows. No DOM; the panels put these strings in place.
 */
import {
  adviceOf,
  type BatchFileStatus,
  type BatchResult,
  type Budget,
  type CompressReport,
  type Hint,
  type ProgressEvent,
  type ScanSummary,
  type StackFrameInfo,
} from '../src-main/contract';
import { formatBytes, formatPsnr } from './format';
import type { ViewMode } from './view-types';

export const LOSSY_CAUTION =
  'Caution: this output is lossy and changes pixel data. Keep preservation masters lossless; medical, forensic and legal ' +
  "images need your institution's approval. Follow your local digitisation guidelines.";
export const CLEANING_CAUTION =
  'Caution: cleaning alters pixel data. Keep the original and the removed part where your institution requires it; never ' +
  'clean preservation masters, medical, forensic or legal images without approval. Follow your local digitisation guidelines.';

/** The masthead's transport label. */
export function transportLabel(transport: 'ipc' | 'http'): string {
  return transport === 'ipc' ? 'desktop' : 'browser · 127.0.0.1';
}

const channelsText = (n: number) => `${n} channel${n > 1 ? 's' : ''}`;

/** The masthead line of an open scan. */
export function scanInfoText(scan: ScanSummary): string {
  return `${scan.name} · ${scan.width}×${scan.height} px · ${scan.bitDepth}-bit · ${channelsText(scan.channels)} (${scan.colour}) · ${formatBytes(scan.inputBytes)}`;
}

/** The masthead line of an open stack file. */
export function stackInfoText(
  info: StackFrameInfo,
  size: { width: number; height: number; channels: number },
) {
  return `${info.name} · stack of ${info.frameCount} frames · ${size.width}×${size.height} px · ${info.bitDepth}-bit · ${channelsText(size.channels)} · ${formatBytes(info.fileBytes)}`;
}

/** The status line after an encode. */
export function encodedStatus(r: Pick<CompressReport, 'outputBytes' | 'psnr' | 'ssim'>): string {
  return `Encoded: ${formatBytes(r.outputBytes)}, PSNR ${formatPsnr(r.psnr)}, SSIM ${r.ssim.toFixed(4)}.`;
}

/** What the status bar says while the encoder works at `budget` (tile 0: whole planes). */
export function evaluateLabel(budget: Budget, tile: number): string {
  const tiles = tile > 0 ? ` in tiles of ${tile}` : '';
  switch (budget.kind) {
    case 'rank':
      return `Encoding at rank ${budget.rank}${tiles}…`;
    case 'psnr':
      return `Finding the smallest file ≥ ${budget.db} dB${tiles}…`;
    case 'ssim':
      return `Finding the smallest file with SSIM ≥ ${budget.value}${tiles}…`;
    default:
      return `Finding the best quality that fits the budget${tiles}…`;
  }
}

type Progress = Pick<ProgressEvent, 'done' | 'total' | 'stage' | 'file' | 'message'>;

/** The status line of a running batch: files finished of all, and the last one's outcome. */
export function batchProgressText(e: Progress): string {
  const last = e.file ? ` · last: ${recentLabel(e.file)} ${e.stage}` : '';
  return `Batch: ${e.done} of ${e.total} file${e.total === 1 ? '' : 's'} finished${last}`;
}

/**
 * The batch's words on the status line while it runs: which file of how many started last, and how many
 * are finished (two files may run at once).
 */
export function batchRunLabel(started: number, finished: number, total: number, file?: string): string {
  if (!total) return 'Batch: listing the scans…';
  const which = file ? ` (${recentLabel(file)})` : '';
  return `Batch: compressing file ${Math.max(1, started)} of ${total}${which}, ${finished} finished`;
}

/**
 * One file's row in the batch list. A message that starts with the file's own path (the runner names
 * the file it refuses) starts after it: the row already names the file.
 */
export function batchRowText(e: Progress & { file: string }): string {
  let message = e.message;
  const at = message?.indexOf(`${e.file}: `) ?? -1;
  if (message && at >= 0 && (at === 0 || /[/\\]$/.test(message.slice(0, at))))
    message = message.slice(at + e.file.length + 2);
  return `${e.file} — ${e.stage}${message ? `: ${message}` : ''}`;
}

/** The message of a finished file: its error, else its size and PSNR, else nothing. */
export function batchFileMessage(f: BatchFileStatus): string | undefined {
  return (
    f.message ??
    (f.outputBytes !== undefined ? `${formatBytes(f.outputBytes)}, PSNR ${f.psnr?.toFixed(2)} dB` : undefined)
  );
}

/** The status line of a finished batch and whether it reads as an error. */
export function batchDoneStatus(r: Pick<BatchResult, 'files' | 'cancelled'>): {
  text: string;
  isError: boolean;
} {
  const count = (state: BatchFileStatus['state']) => r.files.filter((f) => f.state === state).length;
  const failed = count('failed');
  const skipped = count('skipped');
  const n = r.files.length;
  const text =
    `Batch done: ${count('done')} of ${n} file${n === 1 ? '' : 's'} compressed` +
    `${skipped ? `, ${skipped} skipped` : ''}${failed ? `, ${failed} failed` : ''}.`;
  return { text: r.cancelled ? 'Batch cancelled.' : text, isError: failed > 0 };
}

/** What the two panes show, for their labels. */
export interface PaneView {
  showing: 'model' | 'cleaned' | 'removed';
  mode: ViewMode;
  gain: number;
  layerIndex: number;
  tiled: boolean;
  tile: number;
  /** The pane shows a decoded file with a wavelet residual layer on top of its rank-`rank` base. */
  residual?: boolean;
  rank: number;
  /** Layers the page holds; a larger whole-plane rank is shown at this one until more arrive. */
  held: number;
}

/** What the Tile ranks view says in whole-plane mode, in place of the map. */
export const NO_TILES =
  'No tile ranks: the scan is coded as whole planes. Choose “tiles of” under Planes to see each tile’s rank.';

/** The right pane's label for a decoded file with a wavelet residual layer (rank 0: that layer alone). */
function residualLabel(rank: number): string {
  return rank === 0
    ? 'the file: wavelet residual layer only (rank 0)'
    : `the file: rank ${rank} + wavelet residual layer`;
}

/** The labels above the left and right panes. */
export function paneLabels(p: PaneView): { left: string; right: string } {
  const right =
    p.showing === 'cleaned'
      ? 'cleaned'
      : p.showing === 'removed'
        ? `removed part × ${p.gain}`
        : p.mode === 'diff'
          ? `difference at rank ${p.rank} × ${p.gain}`
          : p.mode === 'layer'
            ? `layer ${p.layerIndex + 1}: σᵢuᵢvᵢᵀ`
            : p.mode === 'tiles' && !p.tiled
              ? 'Tile ranks: none, the scan is coded as whole planes'
              : p.tiled
                ? `tiles of ${p.tile}, rank ≤ ${p.rank}`
                : p.residual
                  ? residualLabel(p.rank)
                  : p.held < p.rank
                    ? `rank ${p.rank} (showing ${p.held} until the deeper layers arrive)`
                    : `rank ${p.rank}`;
  const left = p.mode === 'side' ? 'original' : p.mode === 'swipe' ? 'original | reconstruction' : '';
  return { left, right };
}

/** What the left pane says of a stack frame when no folder of originals is given: a stack keeps none. */
export const NO_ORIGINAL_FRAME =
  'The original frame is not in the stack file. To see it here, give the folder of the original frames in the Stack card.';

/** What the left pane says of a stack frame: no originals asked for, or why this one is not shown. */
export function noOriginalText(info: StackFrameInfo): string | undefined {
  if (!info.original) return NO_ORIGINAL_FRAME;
  return info.original.shown ? undefined : `The original frame is not shown: ${info.original.note}.`;
}

/**
 * The pane labels and slider readout of a stack frame. Frames are counted from 1 here, in the CLI's
 * reports and in its `--frame` option alike.
 */
export function frameLabels(info: StackFrameInfo): { left: string; right: string; position: string } {
  const n = info.frame + 1;
  const name = info.frameNames[info.frame];
  const o = info.original;
  return {
    left: o?.shown
      ? `original of frame ${n} · ${o.note.replace(/^original: /, '')}`
      : `original of frame ${n}: ${o ? 'not shown' : 'not available, not kept in a stack file'}`,
    right: `frame ${n} of ${info.frameCount}${name ? ` · ${name}` : ''} · decoded from the stack file`,
    position: `${n} / ${info.frameCount}`,
  };
}

const frameName = (info: StackFrameInfo) => info.frameNames[info.frame] ?? `frame ${info.frame + 1}`;

/** The Stack card's readouts by data-metric: `value` for data-value ('' for none), `text` for the <dd>. */
export function stackCardCells(
  info: StackFrameInfo,
): Record<StackMetric, { value: string; text: string; exact: boolean }> {
  const cell = (value: number, text: string) => ({
    value: Number.isNaN(value) ? '' : String(value),
    text,
    exact: true,
  });
  const w = info.worst;
  return {
    frame: cell(info.frame + 1, `${info.frame + 1} · ${frameName(info)}`),
    'frame-count': cell(info.frameCount, String(info.frameCount)),
    'eigen-frames': cell(Math.max(...info.ranks), info.ranks.join(' / ')),
    residual: cell(info.residual ? 1 : 0, info.residual ? 'yes' : 'no'),
    'worst-psnr': cell(w ? w.psnr : Number.NaN, w ? `${w.psnr.toFixed(2)} dB · frame ${w.frame + 1}` : '–'),
  };
}
/** The Stack card's readouts, by their `data-metric` in index.html. */
export const STACK_METRICS = ['frame', 'frame-count', 'eigen-frames', 'residual', 'worst-psnr'] as const;
export type StackMetric = (typeof STACK_METRICS)[number];

/** Whether a stack frame records its own PSNR or SSIM. */
export const hasFrameQuality = (info: StackFrameInfo) => info.psnr !== undefined || info.ssim !== undefined;

/** The note under the Stack card. */
export function stackNote(info: StackFrameInfo): string {
  return hasFrameQuality(info)
    ? 'PSNR and SSIM of this frame as recorded in the file; sizes are for the whole stack.'
    : 'This stack file records no per-frame PSNR or SSIM and holds no originals to compare against, so only sizes are shown (bytes, ratio and bits per pixel of the whole stack; the eigen-frames are shared by every frame). Per-frame figures are in the report of `rankfold compress --stack --json`.';
}

/** The status line once a stack file is open. */
export function stackOpenedStatus(info: StackFrameInfo): string {
  return `Opened the stack ${info.name}: ${info.frameCount} frames, ${info.ranks.join('/')} eigen-frames.`;
}

/** A recent file's button label: its name without folders. */
export function recentLabel(path: string): string {
  return path.split(/[\\/]/).pop() ?? path;
}

/** A colour map's legend: a CSS gradient and what its two ends and middle mean. */
export interface MapLegend {
  gradient: string;
  low: string;
  mid: string;
  high: string;
}

/** Rank-map stops (deep ink blue → verdigris → straw), shared with the view's painter. */
export const RANK_RAMP: readonly (readonly [number, number, number])[] = [
  [28, 42, 74],
  [47, 125, 109],
  [232, 200, 110],
];
const rgb = (c: readonly number[]) => `rgb(${c.join(',')})`;

/** The legend of the colour map on screen, if the view shows one. */
export function mapLegend(p: {
  mode: ViewMode;
  showing: PaneView['showing'];
  gain: number;
  tileRanks?: { min: number; max: number };
}): MapLegend | undefined {
  // The removed part (original − cleaned) around mid-grey (../figures.ts removedForDisplay): light where
  // cleaning took brightness away, dark where it added some; saturates at half the range over the gain.
  if (p.showing === 'removed')
    return {
      gradient: 'linear-gradient(to right, rgb(0,0,0), rgb(128,128,128), rgb(255,255,255))',
      low: `cleaning brightened by ≥ ${Math.round(128 / p.gain)} grey levels`,
      mid: 'nothing removed',
      high: `darkened by ≥ ${Math.round(128 / p.gain)}`,
    };
  if (p.showing === 'model' && p.mode === 'diff')
    return {
      gradient: 'linear-gradient(to right, rgb(0,128,255), rgb(128,128,128), rgb(255,128,0))',
      low: `too dark by ≥ ${Math.round(255 / p.gain)} grey levels`,
      mid: 'no difference',
      high: `too bright by ≥ ${Math.round(255 / p.gain)}`,
    };
  if (p.showing === 'model' && p.mode === 'layer')
    return {
      gradient: 'linear-gradient(to right, rgb(51,115,255), rgb(128,128,128), rgb(255,198,77))',
      low: 'layer darkens',
      mid: 'no effect',
      high: 'layer brightens',
    };
  if (p.mode === 'tiles' && p.tileRanks)
    return {
      gradient: `linear-gradient(to right, ${RANK_RAMP.map(rgb).join(', ')})`,
      low: `rank ${p.tileRanks.min}`,
      mid: 'tile rank',
      high: `rank ${p.tileRanks.max}`,
    };
  return undefined;
}

/** What to do, in the app's words, for each hint an error can carry (see `Hint` in the contract). */
const GUI_ADVICE: Record<Hint, string> = {
  overwrite: '; tick “replace an existing file” in Save to overwrite it',
  'whole-plane': '; choose “whole plane” under Planes',
  'pixel-limit': ' (the limit this app was started with)',
  timeout: '',
  'psnr-budget': '; use a dB budget instead',
};

/** An error as the page receives it: a message, and details that may carry a hint code. */
export type PageError = string | { message: string; details?: Record<string, unknown> };

/** An absolute path (POSIX or Windows) in a message. */
const ABSOLUTE_PATH = /(?:[A-Za-z]:\\|\/)[^\s:;,'"“”()]+/g;

/**
 * A back-end error as the page shows it: the CLI's advice replaced by the app's (by the error's hint
 * code), and paths shown as the file the user gave (`given`) or, for any other path (a server's
 * temporary copy), its name only. A flag left in a message without a hint still never reaches the page.
 */
export function guiMessage(err: PageError, given?: string): string {
  const { core, hint } = adviceOf(typeof err === 'string' ? { message: err } : err);
  const m = hint ? core + GUI_ADVICE[hint] : core;
  const base = (p: string) => p.split(/[\\/]/).pop() ?? p;
  const paths = (part: string) =>
    part
      .replace(ABSOLUTE_PATH, (p) => (given && base(p) === base(given) ? given : base(p)))
      .replace(/--[a-z][a-z-]*/g, (flag) => `the ${flag.slice(2).replace(/-/g, ' ')} setting`);
  // The path the user gave stays as it is (it may hold spaces); other paths are cut to their names.
  return given ? m.split(given).map(paths).join(given) : paths(m);
}

/** The message of a failed open: the file as the user gave it, then why. */
export function openFailedText(given: string, err: PageError): string {
  const why = guiMessage(err, given);
  // A message that starts with the file's name already says which file: name it once.
  const lead = [given, recentLabel(given)].find((n) => why.startsWith(n));
  const rest = lead ? why.slice(lead.length).replace(/^[\s:—-]+/, '') : why;
  return `Could not open ${given}: ${rest}`;
}
