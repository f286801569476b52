/**
 * Scan-session threads started ahead of time, so that neither opening a scan nor replacing a session's
 * thread after a cancel waits for a thread to load. A thread costs about 0.7 s of CPU before it is ready
 * (its code, the WebAssembly kernels, the factorisation pool and its warm-up: measured 660–810 ms with
 * `process.cpuUsage` on this project's 2-core machine, 4 Dec), which is why spares are started only while
 * the back end has nothing else to do: never beside the job a user is waiting for.
 *
 * Kept: {@link FOREGROUND_SPARES} threads (one for the next scan, one to take over from a cancelled job at
 * once). Each spare is sent a `warm` job (session-ops.ts), which also starts its side thread, so its first
 * encode has both threads ready. The background factorisation starts its own thread: it waits for a quiet
 * moment anyway (backend.ts), and a third spare loading beside the first scan slowed the page's answer to
 * a typed budget by 0.3 s (playwright, load 19, 4 Dec).
 */
import { join } from 'node:path';
import { Worker } from 'node:worker_threads';
import { trace } from './trace';

/** Warm foreground threads to keep: the next scan's, and a replacement for a cancelled job. */
const FOREGROUND_SPARES = 2;
/**
 * Quiet time before a spare is started: the page's next requests (its opening evaluation, the deeper
 * factorisation after it) go first; a page under load sent its opening evaluation 0.85 s after the first
 * factors (RANKFOLD_TRACE=1 at load 15, 4 Dec).
 */
const QUIET_MS = 1000;
/** The id of the `warm` job; session jobs count from 1 (session-worker.ts). */
const WARM_ID = 0;

export class SpareThreads {
  private readonly foreground: Worker[] = [];
  /** A spare is loading: spares start one at a time. */
  private starting = false;
  private timer?: ReturnType<typeof setTimeout>;
  private closed = false;
  /** A spare failed to start (e.g. an unbuilt tree): stop trying, and let jobs start their own threads. */
  private failed = false;

  constructor(
    private readonly workersDir: string,
    /** Whether the back end is busy (a job running or queued anywhere): spares then wait. */
    private readonly busy: () => boolean,
  ) {}

  /** A foreground thread, ready if one is; else one started now. Starts a replacement once all is quiet. */
  take(): Worker {
    const w = this.foreground.shift() ?? this.start(false);
    this.later();
    return w;
  }

  /** Top the spares up after {@link QUIET_MS} of quiet (called when a job ends). */
  later(): void {
    if (this.closed || this.failed) return;
    if (this.timer) clearTimeout(this.timer);
    this.timer = setTimeout(() => this.topUp(), QUIET_MS);
    this.timer.unref();
  }

  /** Start the next missing spare now, unless one is loading or the back end is busy. */
  topUp(): void {
    if (this.closed || this.failed || this.starting || this.busy()) return;
    if (this.foreground.length < FOREGROUND_SPARES) this.foreground.push(this.start(true));
  }

  private start(spare: boolean): Worker {
    const w = new Worker(join(this.workersDir, 'scan-session.js'));
    // A missing build shows up on the first real request, with the session's own error handling.
    w.on('error', () => undefined);
    if (!spare) return w;
    trace(`spare thread t${w.threadId} starting`);
    this.starting = true;
    const done = () => {
      w.off('message', onMessage);
      w.off('exit', done);
      w.off('error', onError);
      this.starting = false;
    };
    // A thread that cannot load (no build) or fails its warm-up: no more spares, jobs start their own.
    const onError = () => {
      this.failed = true;
      done();
    };
    const onMessage = (m: { id?: number; ok?: boolean }) => {
      if (m.id !== WARM_ID || m.ok === undefined) return;
      if (!m.ok) return onError();
      done();
      trace(`spare thread t${w.threadId} ready`);
      this.topUp();
    };
    w.on('message', onMessage);
    // Taken and stopped (a cancel) before it was ready: the next quiet moment starts another.
    w.on('exit', done);
    w.on('error', onError);
    w.postMessage({ id: WARM_ID, op: 'warm', args: { side: true } });
    return w;
  }

  async close(): Promise<void> {
    this.closed = true;
    if (this.timer) clearTimeout(this.timer);
    const all = this.foreground.splice(0);
    await Promise.all(all.map((w) => w.terminate()));
  }
}
