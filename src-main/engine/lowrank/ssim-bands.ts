/**
 * The SSIM of a grey scan's decoded file, summed on the second thread while the calling thread decodes the
 * next band (./decoded-figures). The decoded rows go, as they come, into a small ring of slots (SLOTS slots of
 * 2·radius + SLOT_ROWS rows; on SharedArrayBuffers, reused from measurement to measurement); each full slot
 * becomes one 'ssim-rows' job of ./side-jobs: the SSIM map's row sums of the window rows whose 11 image rows
 * lie in the slot. A slot starts with the last 2·radius rows of the one before, so consecutive jobs cover
 * consecutive window rows, each exactly once. Before a slot is written again its job is joined: computed here
 * when the other thread has not started it (a runner without a second thread computes each at once), so a slow
 * or absent worker never changes the value or waits for it. When every slot holds a job, this thread frees one
 * without waiting where it can (./side-jobs SideJoin state): the jobs the other thread answered, else the
 * latest one it has not started, summed here; it waits (for the oldest) only while the other thread is on the
 * latest. So neither thread idles while the other has SSIM rows to sum, whichever is the faster.
 *
 * The value: the row sums added in row order from 0, divided by the window count, which is how
 * ../metrics SsimStream adds them (its running total) and how ../metrics ssim pools them, so it equals
 * `ssim(source, decoded, width, height, range)` bit for bit whichever thread summed which rows (Wang et al.
 * 2004, the defaults of ../metrics/ssim: 11×11 Gaussian window, σ = 1.5, K1 = 0.01, K2 = 0.03).
 */
import type { ExactF32Samples } from '../../contract';
import type { SideJoin, SideRunner } from './side-jobs';

/** SSIM window radius of ../metrics's defaults (11×11 window). */
const RADIUS = 5;
/** Rows a window spans beyond its first: carried from one slot to the next. */
const OVERLAP = 2 * RADIUS;
/**
 * Window rows per job: 4 bands of the report's decode (16 rows), so 40 jobs on a 2500-row scan, each
 * filtering OVERLAP rows again (16% more filtering than one stream, on the other thread).
 */
const SLOT_ROWS = 64;
/** Slots: the other thread may lag this many jobs behind before this one sums a job itself (or waits). */
const SLOTS = 4;

/**
 * Slots of earlier measurements, kept for the next one of the same width (no fresh pages each time), or made
 * ahead by {@link readySlots}; `touched` joins the job touching their pages, which must end before any write.
 */
let spare: { width: number; slots: Float32Array[]; touched?: () => unknown } | undefined;

function takeSlots(width: number): { slots: Float32Array[]; touched?: () => unknown } {
  const kept = spare?.width === width ? spare : undefined;
  if (spare && !kept) spare.touched?.();
  spare = undefined;
  return kept ?? { slots: newSlots(width) };
}

function newSlots(width: number): Float32Array[] {
  const n = (OVERLAP + SLOT_ROWS) * width;
  const shared = typeof SharedArrayBuffer === 'function';
  return Array.from({ length: SLOTS }, () =>
    shared ? new Float32Array(new SharedArrayBuffer(4 * n)) : new Float32Array(n),
  );
}

/**
 * Make the slots of the next measurement of a `width`-wide scan now, with their pages touched on the other
 * thread (`side`, a 'touch-pages' job of ./side-jobs), so the thread that later fills them with decoded rows
 * does not take their first-touch page faults (about 4 MB on a 3300-wide scan, ~11 ms at this project's
 * measured ~2.8 ms per fresh MB), and that thread's SSIM kernel is made ready for the width (its ~2 MB of
 * memory touched: ../metrics readySsimKernel). Nothing is done when slots of that width are kept already or the
 * runtime has no shared memory. The jobs are joined before a slot is first written.
 */
export function readySlots(width: number, side: SideRunner): void {
  if (spare?.width === width || typeof SharedArrayBuffer !== 'function') return;
  spare?.touched?.();
  const slots = newSlots(width);
  const touch = side('touch-pages', { arrays: slots });
  // That thread's SSIM kernel made ready too (its memory's fresh pages touched): it sums most of the jobs.
  const kernel = side('ssim-ready', { width });
  spare = {
    width,
    slots,
    touched: () => {
      touch();
      kernel();
    },
  };
}

/** Write 0 to one value of every 4 KiB page of each array (fresh zero pages: the values do not change). */
export function touchPages({ arrays }: { arrays: Float32Array[] }): number {
  let pages = 0;
  for (const a of arrays)
    for (let i = 0; i < a.length; i += 1024) {
      a[i] = 0;
      pages++;
    }
  return pages;
}

/** A job still holding its slot: its place in job order and its join. */
interface Pending {
  index: number;
  slot: number;
  join: SideJoin<Float64Array>;
}

/**
 * The SSIM of `source` (the whole grey plane, width×height, height and width ≥ 11) against decoded rows
 * added in order with {@link SsimBands.add}; {@link SsimBands.value} once all `height` rows are in.
 */
export class SsimBands {
  private readonly slots: Float32Array[];
  /** The job touching the slots' pages (./ssim-bands readySlots), until joined before the first write. */
  private touched: (() => unknown) | undefined;
  /** Jobs still holding a slot, in job order; slots holding no job; the row sums of every job joined, by job. */
  private readonly pending: Pending[] = [];
  private readonly free: number[] = [];
  private readonly sums: Float64Array[] = [];
  private jobs = 0;
  private slot = 0;
  /** Image row of the current slot's first row, and the rows in it. */
  private from = 0;
  private filled = 0;
  private readonly capacity = OVERLAP + SLOT_ROWS;

  constructor(
    private readonly run: SideRunner,
    private readonly source: ExactF32Samples,
    private readonly width: number,
    private readonly height: number,
    private readonly range: number,
  ) {
    const { slots, touched } = takeSlots(width);
    this.slots = slots;
    this.touched = touched;
    for (let k = SLOTS - 1; k > 0; k--) this.free.push(k);
  }

  /** Add the next `rows` decoded rows, from b[0]. */
  add(b: Float32Array, rows: number): void {
    this.joinTouch();
    const { width } = this;
    let done = 0;
    while (done < rows) {
      const take = Math.min(rows - done, this.capacity - this.filled);
      this.slots[this.slot].set(b.subarray(done * width, (done + take) * width), this.filled * width);
      this.filled += take;
      done += take;
      if (this.filled === this.capacity && this.from + this.filled < this.height) this.submit(true);
    }
  }

  /** The mean SSIM, once every row was added (joins every job). */
  value(): number {
    this.joinTouch();
    if (this.from + this.filled !== this.height)
      throw new RangeError(`SsimBands: ${this.from + this.filled} of ${this.height} rows were added`);
    if (this.filled > OVERLAP) this.submit(false);
    // From the last job down: a job the other thread has not started is computed here meanwhile.
    while (this.pending.length > 0) this.joinAt(this.pending.length - 1);
    let total = 0;
    for (const s of this.sums) for (let i = 0; i < s.length; i++) total += s[i];
    spare = { width: this.width, slots: this.slots };
    return total / ((this.width - OVERLAP) * (this.height - OVERLAP));
  }

  /** After a failed decode: every pending job joined (none may still read a slot), their sums dropped. */
  drop(): void {
    this.joinTouch();
    for (let j = this.pending.length - 1; j >= 0; j--)
      try {
        this.pending[j].join();
      } catch {
        // The decode's error is the one to report.
      }
    this.pending.length = 0;
  }

  /** The touch job of the slots joined (its answer only says it ended: nothing writes them from now on). */
  private joinTouch(): void {
    const t = this.touched;
    this.touched = undefined;
    t?.();
  }

  /** Offer the current slot's window rows as a job; with `more`, start a free slot with its overlap. */
  private submit(more: boolean): void {
    const { width, from, filled } = this;
    const rows = this.slots[this.slot];
    const join = this.run('ssim-rows', {
      a: this.source.subarray(from * width, (from + filled) * width),
      b: rows.subarray(0, filled * width),
      width,
      height: this.height,
      range: this.range,
      from,
      to: from + filled - OVERLAP,
    });
    this.pending.push({ index: this.jobs++, slot: this.slot, join });
    if (!more) return;
    const next = this.freeSlot();
    const overlap = rows.subarray((filled - OVERLAP) * width, filled * width);
    // The job just offered, when it was the one computed here to free a slot: its overlap moves to the start.
    if (next === this.slot) rows.copyWithin(0, (filled - OVERLAP) * width, filled * width);
    else this.slots[next].set(overlap);
    this.slot = next;
    this.from = from + filled - OVERLAP;
    this.filled = OVERLAP;
  }

  /**
   * A slot no job holds, joining jobs to free one when none is: every answered job (no wait); else the latest
   * one the other thread has not started, computed here (this thread sums instead of waiting, while the other
   * goes on with the ones before it); else the oldest, waiting for it. A runner that cannot tell where its jobs
   * are has the oldest joined, as it comes.
   */
  private freeSlot(): number {
    if (this.free.length === 0) {
      const state = (j: number) => this.pending[j].join.state?.();
      for (let j = this.pending.length - 1; j >= 0; j--) if (state(j) === 'answered') this.joinAt(j);
      if (this.free.length === 0) {
        let j = this.pending.length - 1;
        while (j > 0 && state(j) !== 'offered') j--;
        this.joinAt(j);
      }
    }
    return this.free.pop() as number;
  }

  /** Join pending job j: its row sums kept in job order, its slot free. */
  private joinAt(j: number): void {
    const [p] = this.pending.splice(j, 1);
    this.sums[p.index] = p.join();
    this.free.push(p.slot);
  }
}
