/**
 * What the page shows, in one place: the open scan or stack, its model, the budget, tiling, the preview
 * and cleaning results, and the jobs in flight. Panels read and write this object; the DOM holds only
 * what the user typed or moved (the rank slider's position, the text fields).
 */
import type { Budget, EvaluateResult, ScanSummary, StackFrameInfo } from '../src-main/contract';
import type { Calibration } from './figures';
import type { LowRankModel } from './model';

/** What the right pane shows: the model at the slider's rank, or a cleaning result. */
export type Showing = 'model' | 'cleaned' | 'removed';

/** An open stack file: the frame on screen, the one the slider asks for, and the fetch in flight. */
interface StackState {
  path?: string;
  info?: StackFrameInfo;
  /** Where the original frames are, as the user typed it (once chosen). */
  originals?: string;
  want: number;
  /** The `seq` of the fetch loop running, if any. */
  loading?: number;
  /** Bumped when the stack is left: fetches of an older seq are dropped. */
  seq: number;
}

export interface PageState {
  scan?: ScanSummary;
  model?: LowRankModel;
  budget: Budget;
  /** The rank the last budget maps to, marked on the charts. */
  budgetRank?: number;
  tiled: boolean;
  tile: number;
  /**
   * The encoder's own decoded planes, for a file the page cannot rebuild from σ, U, V: tiled mode (with the
   * tile ranks), or a file with a wavelet residual layer (`residual`), shown while the slider is at its rank.
   */
  preview?: { planes: Float32Array[]; tiles?: EvaluateResult['tileRanks']; residual?: boolean };
  cleaned?: { cleaned: Float32Array[]; removed: Float32Array[] };
  /** Sizes of real whole-plane encodes of the open scan, for the instant size estimate. */
  measured: Calibration[];
  /** Bumped per evaluation; an answer of an older one is dropped. */
  evalSeq: number;
  /** Bumped per open (scan or stack); a scan still opening under an older one gives way. */
  openSeq: number;
  /** performance.now() when the open scan was asked for (0 before any). */
  openedAt: number;
  firstPaintMs?: number;
  /** The job the status bar follows (and its Cancel button cancels). */
  job?: string;
  batchJob?: string;
  reportId?: string;
  showing: Showing;
  stack: StackState;
}

export function createState(): PageState {
  return {
    budget: { kind: 'rank', rank: 1 },
    tiled: false,
    tile: 64,
    measured: [],
    evalSeq: 0,
    openSeq: 0,
    openedAt: 0,
    showing: 'model',
    stack: { want: 0, seq: 0 },
  };
}
