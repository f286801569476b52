/**
 * The per-frame work of `compress --stack` on two threads: the calling thread and one worker
 * (src-main/node/workers/stack.ts) take frames from a shared counter (Atomics.add) until none is left,
 * so a thread slowed by other processes simply takes fewer. Two kinds of work, each independent per frame:
 *  - the wavelet transform of every frame (the stack analysis), written into shared planes;
 *  - PSNR and SSIM of every frame of the chosen file, decoded by the reader and measured against its source.
 * Every frame is computed by the same code whichever thread takes it, so results are bit-identical with
 * 1 or 2 threads (test/stack/threads.test.ts). With 1 thread, or when the worker cannot start, all runs here.
 */
import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import { type ErrorPayload, fromErrorPayload, RankfoldError } from '../../contract';
import type { StackInput } from '../../engine/codec/stack-header';
import { measureFrames } from '../../engine/codec/stack-quality';
import { measureStackFile, transformFrames } from '../../engine/lowrank/stack-frames';

/** What the stack worker is sent: the series (Float32 planes in shared memory) and one job. */
export interface StackThreadJob {
  input: StackInput;
  /** Int32 counter of the next frame to take. */
  counter: SharedArrayBuffer;
  job:
    | { kind: 'transform'; out: SharedArrayBuffer[][] }
    | {
        kind: 'measure';
        bytes: Uint8Array;
        withSsim: boolean;
        psnr: SharedArrayBuffer;
        ssim: SharedArrayBuffer;
      };
}

export type StackThreadReply = { ok: true } | { ok: false; error: ErrorPayload };

/** Frames taken one at a time from a shared counter. */
function* claimFrames(counter: Int32Array, count: number): Generator<number> {
  for (let j = Atomics.add(counter, 0, 1); j < count; j = Atomics.add(counter, 0, 1)) yield j;
}

/**
 * Run one job's share on this thread (the worker's entry calls this too). `frameOf`: decoded frames already
 * at hand (the encoder's, bit-identical to the reader's), used instead of decoding the file again.
 */
export function runShare(t: StackThreadJob, frameOf?: (j: number) => Float32Array[]): void {
  const frames = claimFrames(new Int32Array(t.counter), t.input.frames.length);
  if (t.job.kind === 'measure') {
    const { bytes, withSsim } = t.job;
    const m = frameOf
      ? measureFrames(t.input, frameOf, withSsim, frames)
      : measureStackFile(bytes, t.input, frames, withSsim);
    // Only this thread's frames are filled in (the others are NaN here).
    const psnr = new Float64Array(t.job.psnr);
    const ssim = new Float64Array(t.job.ssim);
    m.psnr.forEach((v, j) => {
      if (Number.isNaN(v)) return;
      psnr[j] = v;
      if (withSsim) ssim[j] = m.ssim[j];
    });
  } else if (t.job.kind === 'transform')
    transformFrames(
      t.input,
      frames,
      t.job.out.map((ch) => ch.map((b) => new Float64Array(b))),
    );
}

/** Threads for the per-frame work: RANKFOLD_STACK_THREADS (1 or 2), else 2 when there are ≥ 2 cores. */
export function stackThreads(): number {
  const env = Number(process.env.RANKFOLD_STACK_THREADS);
  if (env === 1 || env === 2) return env;
  return availableParallelism() >= 2 ? 2 : 1;
}

function workerFile(): string | undefined {
  const here = dirname(fileURLToPath(import.meta.url));
  return [
    join(here, 'workers', 'stack.js'),
    join(here, '..', 'workers', 'stack.js'),
    resolve(here, '..', '..', '..', 'dist', 'workers', 'stack.js'),
  ].find((c) => existsSync(c));
}

/** 1 or 2 threads for a series' per-frame work. Close it when done. */
export class StackThreads {
  private shared: StackInput | undefined;
  private constructor(private readonly worker: Worker | undefined) {}

  /** Start the worker when `threads` is 2 (early: it loads while frames decode). One that cannot start leaves the work here. */
  static start(threads: number): StackThreads {
    const file = threads > 1 ? workerFile() : undefined;
    let worker: Worker | undefined;
    if (file)
      try {
        worker = new Worker(file);
        worker.unref();
      } catch {
        worker = undefined;
      }
    return new StackThreads(worker);
  }

  /** Copy the series' planes into shared memory; the returned series holds those copies (use it from now on). */
  share(input: StackInput): StackInput {
    this.shared = {
      ...input,
      frames: input.frames.map((f) => ({
        ...f,
        planes: f.planes.map((p) => {
          const s = new Float32Array(new SharedArrayBuffer(4 * p.length));
          s.set(p);
          return s;
        }),
      })),
    };
    return this.shared;
  }

  private get input(): StackInput {
    if (!this.shared) throw new Error('internal: StackThreads used before share()');
    return this.shared;
  }

  /** How many threads share the work. */
  get threads(): number {
    return this.worker ? 2 : 1;
  }

  private async run(job: StackThreadJob['job'], frameOf?: (j: number) => Float32Array[]): Promise<void> {
    const t: StackThreadJob = { input: this.input, counter: new SharedArrayBuffer(4), job };
    const w = this.worker;
    // The worker keeps the process alive only while it has a job.
    w?.ref();
    const other = w
      ? new Promise<void>((resolveJob, reject) => {
          const done = (m: StackThreadReply) => {
            w.off('error', failed);
            if (m.ok) resolveJob();
            else reject(fromErrorPayload(m.error));
          };
          const failed = (err: Error) => {
            w.off('message', done);
            reject(new RankfoldError(`the stack worker failed: ${err.message}`));
          };
          w.once('message', done);
          w.once('error', failed);
          w.postMessage(t);
        }).finally(() => w.unref())
      : Promise.resolve();
    // A throw here still waits for the worker, which writes into the same shared planes.
    let failure: unknown;
    try {
      runShare(t, frameOf);
    } catch (err) {
      failure = err;
    }
    await other;
    if (failure) throw failure;
  }

  /** Wavelet coefficients of every frame's coded planes, [channel][frame]. */
  async transform(): Promise<Float64Array[][]> {
    const n = this.input.width * this.input.height;
    const N = this.input.frames.length;
    const out = Array.from({ length: this.input.channels === 3 ? 3 : 1 }, () =>
      Array.from({ length: N }, () => new SharedArrayBuffer(8 * n)),
    );
    await this.run({ kind: 'transform', out });
    return out.map((ch) => ch.map((b) => new Float64Array(b)));
  }

  /**
   * PSNR (and SSIM when `withSsim`) of every frame of the stack file `bytes`: this thread measures the
   * frames `frameOf` rebuilds (the encoder's, no second decode), the worker those the reader decodes.
   */
  async measure(
    bytes: Uint8Array,
    withSsim: boolean,
    frameOf: (j: number) => Float32Array[],
  ): Promise<{ psnr: number[]; ssim: number[] }> {
    const N = this.input.frames.length;
    const psnr = new SharedArrayBuffer(8 * N);
    const ssim = new SharedArrayBuffer(8 * N);
    await this.run({ kind: 'measure', bytes, withSsim, psnr, ssim }, frameOf);
    return {
      psnr: Array.from(new Float64Array(psnr)),
      ssim: withSsim ? Array.from(new Float64Array(ssim)) : [],
    };
  }

  async close(): Promise<void> {
    await this.worker?.terminate();
  }
}
