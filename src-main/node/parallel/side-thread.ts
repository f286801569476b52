/**
 * One worker thread for the scan encoder's side jobs (src-main/engine/lowrank/side-jobs.ts), used
 * synchronously: `run` posts a job (its typed arrays copied, unless shared) and returns a function that, once the calling
 * thread has done its own share, either takes the job back and computes it here (the worker had not started
 * it: still loading, or its core busy with other processes) or waits for the worker's answer with
 * Atomics.wait and reads it with receiveMessageOnPort. Both paths run the same function on the same data, so
 * the encoder's output does not depend on which thread did the work (test/codec/workers-identical.test.ts).
 *
 * The claim word of each job: OFFERED → the worker sets TAKEN with compareExchange before it starts, then
 * posts the answer and sets DONE (or FAILED); the caller withdraws with compareExchange OFFERED → WITHDRAWN.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { MessageChannel, type MessagePort, receiveMessageOnPort, Worker } from 'node:worker_threads';
import {
  SIDE_JOBS,
  type SideJobName,
  type SideJobState,
  type SideJobs,
  type SideRunner,
} from '../../engine/lowrank/side-jobs';

/** States of a job's claim word. */
export const CLAIM = { offered: 0, taken: 1, done: 2, failed: 3, withdrawn: 4 } as const;
/** Atomics.wait slice, and how long a taken job may run before the worker is presumed dead. */
const WAIT_SLICE_MS = 1000;
const GIVE_UP_MS = 600_000;

/** What the worker receives per job. */
export interface SideMessage {
  id: number;
  name: SideJobName;
  args: Record<string, unknown>;
  claim: Int32Array;
}

/** What the worker answers. */
export type SideAnswer =
  | { id: number; ok: true; value: unknown }
  | { id: number; ok: false; message: string };

function findSideWorker(): string | undefined {
  return [
    './workers/side.js',
    '../workers/side.js',
    '../../../dist/workers/side.js',
    '../dist/workers/side.js',
  ]
    .map((p) => fileURLToPath(new URL(p, import.meta.url)))
    .find((c) => existsSync(c));
}

const isTyped = (v: unknown): v is Float32Array | Float64Array | Int32Array | Uint8Array =>
  v instanceof Float32Array ||
  v instanceof Float64Array ||
  v instanceof Int32Array ||
  v instanceof Uint8Array;

/**
 * The job's arguments with every typed array (also inside arrays) copied, and the copies' buffers. Arrays on
 * a SharedArrayBuffer (a colour scan's analysed chroma planes, ../../engine/lowrank/residual-first) are sent
 * as they are: both threads then read the same memory, which neither writes while a job runs.
 */
function copied(args: Record<string, unknown>): { args: Record<string, unknown>; transfer: ArrayBuffer[] } {
  const transfer: ArrayBuffer[] = [];
  const copy = (v: unknown): unknown => {
    if (isTyped(v)) {
      if (v.buffer instanceof SharedArrayBuffer) return v;
      const c = v.slice();
      transfer.push(c.buffer as ArrayBuffer);
      return c;
    }
    return Array.isArray(v) ? v.map(copy) : v;
  };
  return { args: Object.fromEntries(Object.entries(args).map(([k, v]) => [k, copy(v)])), transfer };
}

/** A job's claim word as the state its join would find (only read before the join). */
function stateOf(claim: number): SideJobState {
  return claim === CLAIM.offered ? 'offered' : claim === CLAIM.taken ? 'running' : 'answered';
}

export class SideThread {
  private readonly worker: Worker;
  private readonly port: MessagePort;
  private readonly answers = new Map<number, SideAnswer>();
  private next = 1;
  /** Jobs the worker computed (the others were taken back and computed on the calling thread). */
  taken = 0;
  private readonly loaded: Promise<void>;
  /** What runs once just before the next job is posted ({@link beforeNextJob}). */
  private beforeNext: (() => void) | undefined;

  private constructor(file: string) {
    const { port1, port2 } = new MessageChannel();
    this.worker = new Worker(file, { workerData: { port: port2 }, transferList: [port2] });
    // Neither keeps the process alive; a failed start only means every job is taken back and run here.
    this.worker.on('error', () => {});
    this.loaded = new Promise((resolve) => {
      this.worker.once('message', () => resolve());
      this.worker.once('exit', () => resolve());
    });
    this.worker.unref();
    this.port = port1;
    this.port.unref();
  }

  /** A started side thread, or undefined when the built worker (dist/workers/side.js) is missing. */
  static start(): SideThread | undefined {
    const file = findSideWorker();
    return file ? new SideThread(file) : undefined;
  }

  run: SideRunner = <K extends SideJobName>(name: K, args: SideJobs[K]['args']) => {
    const before = this.beforeNext;
    this.beforeNext = undefined;
    before?.();
    const id = this.next++;
    const claim = new Int32Array(new SharedArrayBuffer(4));
    const sent = copied(args as unknown as Record<string, unknown>);
    this.port.postMessage({ id, name, args: sent.args, claim } satisfies SideMessage, sent.transfer);
    const join = (): SideJobs[K]['result'] => {
      if (Atomics.compareExchange(claim, 0, CLAIM.offered, CLAIM.withdrawn) === CLAIM.offered)
        return SIDE_JOBS[name](args);
      for (let waited = 0; ; waited += WAIT_SLICE_MS) {
        const state = Atomics.load(claim, 0);
        if (state === CLAIM.done || state === CLAIM.failed) break;
        if (waited > GIVE_UP_MS) throw new Error('side thread: a job got no answer for 10 minutes');
        Atomics.wait(claim, 0, state, WAIT_SLICE_MS);
      }
      this.taken++;
      const answer = this.answer(id);
      if (!answer.ok) throw new Error(`side thread: ${answer.message}`);
      return answer.value as SideJobs[K]['result'];
    };
    return Object.assign(join, { state: () => stateOf(Atomics.load(claim, 0)) });
  };

  /** The answer to job `id`, reading the port until it arrives (it was posted before the claim word changed). */
  private answer(id: number): SideAnswer {
    for (let tries = 0; !this.answers.has(id); tries++) {
      const m = receiveMessageOnPort(this.port);
      if (m) this.answers.set((m.message as SideAnswer).id, m.message as SideAnswer);
      else if (tries > 1000) throw new Error('side thread: an answered job has no message');
      else Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, 1);
    }
    const a = this.answers.get(id) as SideAnswer;
    this.answers.delete(id);
    return a;
  }

  /**
   * Run `fn` once, just before the next job is posted (not before one posted by `fn` itself): to end a job
   * of the worker's idle time (a first touch of pages) that must not delay that one.
   */
  beforeNextJob(fn: () => void): void {
    this.beforeNext = fn;
  }

  /** Resolves once the worker has loaded its code (or has exited). */
  ready(): Promise<void> {
    return this.loaded;
  }

  /** Stop the worker. */
  async close(): Promise<void> {
    this.port.close();
    await this.worker.terminate();
  }
}
