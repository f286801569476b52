/**
 * Main-thread handle on one scan session's worker thread. Requests are queued one at a time; cancel
 * terminates the thread (the only way to stop synchronous number crunching promptly) and the next
 * request starts a fresh thread (a spare one when the owner supplies it) that decodes the scan again.
 * A job cancelled while still queued never starts. Once the scan is decoded its planes are shared
 * (session-ops.ts `sharedImage`): a replacement thread, or another session on the same scan, adopts them
 * instead of decoding the file again.
 */
import { join } from 'node:path';
import { Worker } from 'node:worker_threads';
import {
  CancelledError,
  type DecodedImage,
  type ErrorPayload,
  fromErrorPayload,
  type ScanSummary,
} from '../../contract';
import { trace } from './trace';

export interface SessionProgress {
  done: number;
  total: number;
  stage: string;
}

interface Pending {
  resolve: (v: unknown) => void;
  reject: (e: unknown) => void;
  onProgress?: (p: SessionProgress) => void;
  job?: string;
}

export class SessionWorker {
  private worker?: Worker;
  private nextId = 1;
  private pending = new Map<number, Pending>();
  private opened?: Promise<Omit<ScanSummary, 'scanId' | 'name'>>;
  private chain: Promise<unknown> = Promise.resolve();
  /** Jobs waiting in the chain, and those of them cancelled before they started. */
  private readonly queued = new Set<string>();
  private readonly dropped = new Set<string>();
  /** The decoded scan, planes in shared memory, once a thread of this session (or another) decoded it. */
  private shared?: DecodedImage;
  private onSettled?: () => void;

  constructor(
    private readonly workersDir: string,
    private readonly file: string,
    private readonly page?: number,
    /** Background work (the deeper factorisation): its thread runs at a low CPU priority (scan-session.ts). */
    private readonly background = false,
  ) {}

  /** Use a thread started ahead of time (it has loaded its code already), for the first job only. */
  adopt(w: Worker): this {
    this.spare = w;
    return this;
  }
  private spare?: Worker;

  /** Where a replacement thread comes from after a cancel (a thread started ahead of time). */
  spares(source: () => Worker): this {
    this.spareSource = source;
    return this;
  }
  private spareSource?: () => Worker;

  /** Adopt a scan another session decoded (its planes in shared memory), instead of decoding the file. */
  share(image: DecodedImage | undefined): this {
    this.shared = image;
    return this;
  }

  /** The decoded scan once a thread decoded it (for {@link share}). */
  get image(): DecodedImage | undefined {
    return this.shared;
  }

  /** Called whenever a job ends (done, failed or cancelled). */
  settled(cb: () => void): this {
    this.onSettled = cb;
    return this;
  }

  /** A job is waiting or running (a scan being decoded for `open` alone does not count). */
  get busy(): boolean {
    return this.queued.size > 0 || [...this.pending.values()].some((p) => p.job !== undefined);
  }

  private spawn(): Worker {
    const w =
      this.spare ??
      this.spareSource?.() ??
      new Worker(join(this.workersDir, 'scan-session.js'), { workerData: { background: this.background } });
    trace(`session thread t${w.threadId} for ${this.background ? 'background' : 'foreground'} jobs`);
    this.spare = undefined;
    w.on(
      'message',
      (msg: {
        id: number;
        ok?: boolean;
        value?: unknown;
        error?: ErrorPayload;
        progress?: SessionProgress;
      }) => {
        const p = this.pending.get(msg.id);
        if (!p) return;
        if (msg.progress) return p.onProgress?.(msg.progress);
        this.pending.delete(msg.id);
        if (msg.ok) p.resolve(msg.value);
        else p.reject(fromErrorPayload(msg.error ?? { name: 'Error', message: 'worker failed' }));
      },
    );
    // A crash or exit of the current thread fails its jobs; the exit of a thread we terminated on
    // purpose (cancel) arrives later and must not touch jobs already queued on its replacement.
    w.on('error', (err) => {
      if (this.worker === w) this.failAll(err);
    });
    w.on('exit', () => {
      if (this.worker !== w) return;
      this.worker = undefined;
      this.opened = undefined;
      this.failAll(new CancelledError('the job'));
    });
    this.worker = w;
    return w;
  }

  private failAll(err: unknown) {
    for (const [id, p] of this.pending) {
      this.pending.delete(id);
      p.reject(err);
    }
  }

  private send<T>(
    op: string,
    args: Record<string, unknown>,
    onProgress?: (p: SessionProgress) => void,
    job?: string,
  ): Promise<T> {
    const w = this.worker ?? this.spawn();
    const id = this.nextId++;
    return new Promise<T>((resolve, reject) => {
      this.pending.set(id, { resolve: resolve as (v: unknown) => void, reject, onProgress, job });
      w.postMessage({ id, op, args });
    });
  }

  /** Decode, or adopt the shared planes (after a cancel), and return the scan's figures. */
  open(onProgress?: (p: SessionProgress) => void): Promise<Omit<ScanSummary, 'scanId' | 'name'>> {
    if (!this.opened || !this.worker) {
      const shared = this.shared;
      this.opened = shared
        ? this.send('adopt', { image: shared })
        : this.send<{ summary: Omit<ScanSummary, 'scanId' | 'name'>; image: DecodedImage }>(
            'open',
            { file: this.file, page: this.page },
            onProgress,
          ).then((r) => {
            this.shared = r.image;
            return r.summary;
          });
      this.opened.catch(() => {
        this.opened = undefined;
      });
    }
    return this.opened;
  }

  /** Run one job after the ones before it. */
  run<T>(
    op: string,
    args: Record<string, unknown>,
    job: string,
    onProgress?: (p: SessionProgress) => void,
    /** Awaited before the job starts (it still counts as queued: a cancel meanwhile drops it). */
    gate?: () => Promise<void>,
  ): Promise<T> {
    this.queued.add(job);
    const next = this.chain.then(async () => {
      try {
        if (gate && !this.dropped.has(job)) await gate();
        // Cancelled while queued, or while its scan was being decoded again: never sent.
        if (!this.dropped.has(job) && !this.closed) await this.open();
      } finally {
        this.queued.delete(job);
      }
      if (this.dropped.delete(job) || this.closed) throw new CancelledError('the job');
      return this.send<T>(op, args, onProgress, job);
    });
    this.chain = next.catch(() => undefined);
    void this.chain.then(() => this.onSettled?.());
    return next;
  }

  /** Resolves once no job is running or waiting (checked again after each job: new ones may queue). */
  async whenIdle(): Promise<void> {
    while (this.busy) await this.chain;
  }

  /**
   * Stop the job with this id if it is running or queued in this session. Returns true if something was
   * stopped.
   */
  cancel(job: string): boolean {
    if (this.queued.has(job)) {
      this.dropped.add(job);
      return true;
    }
    const hit = [...this.pending.values()].some((p) => p.job === job);
    if (hit && this.worker) {
      const w = this.worker;
      trace(`cancel ${job}: thread t${w.threadId} stopped`);
      this.worker = undefined;
      this.opened = undefined;
      this.failAll(new CancelledError('the job'));
      void w.terminate();
    }
    return hit;
  }

  private closed = false;

  async close(): Promise<void> {
    this.closed = true;
    const w = this.worker;
    this.worker = undefined;
    this.opened = undefined;
    this.failAll(new CancelledError('the job (its scan was closed)'));
    if (this.spare) await this.spare.terminate();
    this.spare = undefined;
    if (w) await w.terminate();
  }
}
