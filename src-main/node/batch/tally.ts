/**
 * The rows of a batch run as they arrive, with the counts that its 'file' events and progress calls carry.
 */
import type { BatchEvent, BatchRow } from '../../contract';
import { WorstSoFar } from './report';

/** The counts a run's progress calls carry: files and input bytes done of the totals, and failures so far. */
export interface BatchCounts {
  done: number;
  total: number;
  bytesDone: number;
  bytesTotal: number;
  failed: number;
}

/** Who hears of each row (the run's options). */
export interface TallyListeners {
  onEvent?: (e: BatchEvent) => void;
  onProgress?: (p: BatchCounts) => void;
}

/** The rows of a run as they arrive, and the counts its events and progress carry. */
export class Tally {
  readonly rows: BatchRow[] = [];
  /** The report's worst rows so far (thumbnails are drawn by the jobs of files that may end among them). */
  readonly worst = new WorstSoFar();
  bytesDone = 0;
  private done = 0;
  private failed = 0;

  constructor(
    private readonly o: TallyListeners,
    readonly total: number,
    private readonly bytesTotal: number,
  ) {}

  add(row: BatchRow): BatchRow {
    this.rows.push(row);
    this.worst.add(row);
    return row;
  }

  emit(row: BatchRow): void {
    this.done++;
    if (row.status === 'failed') this.failed++;
    const { done, total, bytesDone, bytesTotal, failed } = this;
    this.o.onEvent?.({ event: 'file', done, total, ...row });
    this.o.onProgress?.({ done, total, bytesDone, bytesTotal, failed });
  }
}
