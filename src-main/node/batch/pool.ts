/**
 * A pool of worker_threads, one job per worker at a time. A job that throws, a worker that crashes or
 * runs out of memory, and a job that outlives its timeout each fail that job only: the worker is
 * replaced and the queue goes on.
 *
 * Protocol (structured clone):
 *   main → worker  { type: 'job', id, payload }
 *   worker → main  { type: 'progress', id, data } | { type: 'done', id, result } | { type: 'error', id, error }
 * where `error` is an ErrorPayload (`{ name, message, details }`).
 */
import { Worker } from 'node:worker_threads';
import { CancelledError, type ErrorPayload, hinted, toErrorPayload } from '../../contract';

const TIMEOUT_ADVICE = '; raise it with --timeout';

export type JobOutcome<O> = { ok: true; value: O } | { ok: false; error: ErrorPayload };

export interface JobOptions {
  /** Kill the worker and fail the job after this many milliseconds. 0 = no limit. */
  timeoutMs?: number;
  onProgress?: (data: unknown) => void;
  /** Short label for messages, e.g. the file's relative path. */
  label?: string;
}

interface Pending<I, O> {
  id: number;
  payload: I;
  options: JobOptions;
  resolve: (o: JobOutcome<O>) => void;
}

interface Slot<I, O> {
  worker: Worker;
  job?: Pending<I, O>;
  timer?: NodeJS.Timeout;
  /** Set when we terminate it on purpose, so the exit is not reported as a crash. */
  retiring?: boolean;
}

export class WorkerPool<I, O> {
  private readonly slots: Slot<I, O>[] = [];
  private readonly queue: Pending<I, O>[] = [];
  private nextId = 1;
  private closed = false;

  constructor(
    private readonly workerFile: string | URL,
    readonly size: number,
    private readonly workerData?: unknown,
  ) {
    if (!(size >= 1)) throw new RangeError('pool size must be at least 1');
  }

  /** Queue a job; resolves (never rejects) with its outcome. */
  run(payload: I, options: JobOptions = {}): Promise<JobOutcome<O>> {
    if (this.closed)
      return Promise.resolve({ ok: false, error: toErrorPayload(new CancelledError('the batch')) });
    return new Promise((resolve) => {
      this.queue.push({ id: this.nextId++, payload, options, resolve });
      this.pump();
    });
  }

  /** Jobs queued or running. */
  get busy(): number {
    return this.queue.length + this.slots.filter((s) => s.job).length;
  }

  /** Stop everything: queued and running jobs resolve as cancelled; workers are terminated. */
  async close(): Promise<void> {
    this.closed = true;
    const cancelled = toErrorPayload(new CancelledError('the batch'));
    for (const p of this.queue.splice(0)) p.resolve({ ok: false, error: cancelled });
    await Promise.all(
      this.slots.splice(0).map(async (s) => {
        s.retiring = true;
        if (s.timer) clearTimeout(s.timer);
        const job = s.job;
        s.job = undefined;
        await s.worker.terminate();
        job?.resolve({ ok: false, error: cancelled });
      }),
    );
  }

  private spawn(): Slot<I, O> {
    const worker = new Worker(this.workerFile, { workerData: this.workerData });
    const slot: Slot<I, O> = { worker };
    worker.on(
      'message',
      (msg: { type: string; id: number; data?: unknown; result?: O; error?: ErrorPayload }) => {
        const job = slot.job;
        if (!job || msg.id !== job.id) return;
        if (msg.type === 'progress') job.options.onProgress?.(msg.data);
        else if (msg.type === 'done') this.finish(slot, { ok: true, value: msg.result as O });
        else if (msg.type === 'error')
          this.finish(slot, { ok: false, error: msg.error ?? { name: 'Error', message: 'unknown error' } });
      },
    );
    worker.on('error', (err) => {
      // An uncaught exception or out-of-memory in the worker: the worker is gone; fail its job only.
      this.crash(slot, err);
    });
    worker.on('exit', (code) => {
      if (!slot.retiring) this.crash(slot, new Error(`the worker exited with code ${code}`));
    });
    this.slots.push(slot);
    return slot;
  }

  private crash(slot: Slot<I, O>, err: unknown) {
    if (slot.retiring) return;
    slot.retiring = true;
    const job = slot.job;
    slot.job = undefined;
    if (slot.timer) clearTimeout(slot.timer);
    this.remove(slot);
    slot.worker.terminate().catch(() => {});
    const e = toErrorPayload(err);
    const what = job?.options.label ? `${job.options.label}: ` : '';
    const oom = /ERR_WORKER_OUT_OF_MEMORY|out of memory/i.test(`${e.name} ${e.message}`);
    job?.resolve({
      ok: false,
      error: {
        name: 'WorkerCrash',
        message: oom
          ? `${what}the worker ran out of memory on this file; run with fewer --jobs or split the scan`
          : `${what}the worker stopped unexpectedly on this file (${e.message}); the batch went on without it`,
        details: { cause: e },
      },
    });
    this.pump();
  }

  private remove(slot: Slot<I, O>) {
    const i = this.slots.indexOf(slot);
    if (i >= 0) this.slots.splice(i, 1);
  }

  private finish(slot: Slot<I, O>, outcome: JobOutcome<O>) {
    const job = slot.job;
    slot.job = undefined;
    if (slot.timer) clearTimeout(slot.timer);
    slot.timer = undefined;
    job?.resolve(outcome);
    this.pump();
  }

  private timeout(slot: Slot<I, O>) {
    const job = slot.job;
    if (!job) return;
    slot.retiring = true;
    slot.job = undefined;
    this.remove(slot);
    const ms = job.options.timeoutMs ?? 0;
    const seconds = ms < 10_000 ? (ms / 1000).toFixed(1) : String(Math.round(ms / 1000));
    slot.worker.terminate().then(
      () => {
        job.resolve({
          ok: false,
          error: {
            name: 'TimeoutError',
            message: `${job.options.label ? `${job.options.label}: ` : ''}took longer than the per-file limit of ${seconds} s and was stopped${TIMEOUT_ADVICE}`,
            // The hint lets the app drop the CLI flag and say what to do in the app (contract/replies.ts).
            details: { timeoutMs: job.options.timeoutMs, ...hinted('timeout', TIMEOUT_ADVICE) },
          },
        });
        this.pump();
      },
      () => this.pump(),
    );
  }

  private pump() {
    if (this.closed) return;
    while (this.queue.length) {
      let slot = this.slots.find((s) => !s.job && !s.retiring);
      if (!slot) {
        if (this.slots.length >= this.size) return;
        slot = this.spawn();
      }
      const job = this.queue.shift()!;
      slot.job = job;
      const t = job.options.timeoutMs ?? 0;
      if (t > 0) {
        const s = slot;
        s.timer = setTimeout(() => this.timeout(s), t);
      }
      slot.worker.postMessage({ type: 'job', id: job.id, payload: job.payload });
    }
    // No work left: let idle workers keep the process alive only while jobs exist.
    for (const s of this.slots) if (!s.job) s.worker.unref();
    for (const s of this.slots) if (s.job) s.worker.ref();
  }
}

/** Run `n` async tasks over items with at most `limit` at once, in order of items. */
export async function eachLimit<T>(items: T[], limit: number, fn: (t: T) => Promise<void>) {
  let i = 0;
  await Promise.all(
    Array.from({ length: Math.min(limit, items.length) }, async () => {
      while (i < items.length) await fn(items[i++]);
    }),
  );
}
