/**
 * N computing threads sharing one WebAssembly.Memory, presented as an engine `Backend`: any engine
 * algorithm that takes `{ backend }` (randomizedSvd, the products, singularValues) runs its large
 * matrix products split by output rows, with no copying between threads.
 *
 * `workers: N` means N threads compute: the calling thread takes the first share itself and N − 1
 * worker_threads take the rest (so on the 2-core machines Rankfold targets, `workers: 2` is the
 * caller + one worker thread, one per core; `workers: 1` starts no thread and equals the
 * single-thread engine). A caller that only waited would leave its core idle.
 *
 * Calls stay synchronous: the calling thread posts each worker's share through a shared control
 * block, computes its own share, then blocks in Atomics.wait until the workers have finished
 * (allowed on Node's main thread and in workers; NOT in a browser page, which is why this lives in
 * src-main/node).
 *
 * Large products only: below PARALLEL_MIN_FLOPS the calling thread runs the whole kernel, since a
 * wake-up round trip costs ~10–50 µs.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { Backend, FloatArray, Gemm, Workspace } from '../../engine/linalg';
import { gemmTs } from '../../engine/linalg/gemm-ts';
import { wasmBase64 } from '../../engine/linalg/wasm/generated/kernels-shared';
import {
  decodeBase64,
  growMemoryTo,
  type KernelExports,
  RESERVED_BYTES,
} from '../../engine/linalg/wasm/runtime';
import { kernelOps, touchMemory } from '../../engine/linalg/workspace';
import {
  CLAIM,
  CTRL_WORDS,
  DONE,
  KIND_F32,
  KIND_F64,
  nextRowWord,
  PARAM_WORDS,
  SEQ,
  SHUTDOWN,
  STATUS,
  STATUS_OK,
  writeJob,
} from './protocol';

/**
 * Products below this many flops run on the calling thread alone: 4 Mflop is ~0.15 ms at the
 * kernel's ~25 GFLOP/s, so a ~10–50 µs wake-up round trip would eat most of the gain below it.
 */
const PARALLEL_MIN_FLOPS = 4e6;
/** Bytes in a WebAssembly page; shared memory must declare its maximum (wasm32: 65536 pages = 4 GiB). */
const PAGE = 65536;
const MAX_PAGES = 65536;
const ALIGN = 16;
/** Atomics.wait slice while waiting for a worker, so a dead worker is noticed instead of hanging forever. */
const WAIT_SLICE_MS = 1000;
/** Loads of a `done` word before sleeping in Atomics.wait (~50–100 µs). */
const SPIN = 20000;

export interface PoolOptions {
  /**
   * Computing threads, the calling thread included (N − 1 worker_threads are started). Default 2
   * (the machines Rankfold targets have 2 cores). Range 1…16.
   */
  workers?: number;
  /** Path of the built worker (dist/workers/linalg.js). Found automatically in the repo and in dist/. */
  workerFile?: string;
}

function findWorkerFile(explicit?: string): string {
  const candidates = explicit
    ? [explicit]
    : [
        './workers/linalg.js',
        '../workers/linalg.js',
        '../../../dist/workers/linalg.js',
        '../dist/workers/linalg.js',
      ].map((p) => fileURLToPath(new URL(p, import.meta.url)));
  for (const c of candidates) if (existsSync(c)) return c;
  throw new Error(
    `linalg worker not found (looked for ${candidates.join(', ')}); run \`npm run build\` first`,
  );
}

export class LinalgPool implements Backend {
  readonly label: string;
  private top = RESERVED_BYTES;
  private busy = false;
  private seq = 0;
  private closed = false;
  private splits = 0;
  private readonly ctrl: Int32Array;
  private readonly params: Float64Array;
  private constructor(
    private readonly memory: WebAssembly.Memory,
    private readonly local: KernelExports,
    private readonly workers: Worker[],
    ctrl: SharedArrayBuffer,
    params: SharedArrayBuffer,
  ) {
    this.ctrl = new Int32Array(ctrl);
    this.params = new Float64Array(params);
    const n = workers.length + 1;
    this.label = `${n} worker${n === 1 ? '' : 's'}`;
  }

  /** Start the N − 1 worker threads and wait until each has instantiated the kernels. */
  static async create(options: PoolOptions = {}): Promise<LinalgPool> {
    const count = options.workers ?? 2;
    if (!Number.isInteger(count) || count < 1 || count > 16)
      throw new RangeError(`LinalgPool: expected integer between 1 and 16 for workers but received ${count}`);
    const spawn = count - 1;
    const file = spawn > 0 ? findWorkerFile(options.workerFile) : '';
    const memory = new WebAssembly.Memory({ initial: 17, maximum: MAX_PAGES, shared: true });
    const module = await WebAssembly.compile(decodeBase64(wasmBase64));
    const inst = await WebAssembly.instantiate(module, {
      env: {
        memory,
        abort: () => {
          throw new Error('kernel abort');
        },
      },
    });
    // One slot per worker, plus one for the shared row counter.
    const ctrl = new SharedArrayBuffer(4 * CTRL_WORDS * (spawn + 1));
    const params = new SharedArrayBuffer(8 * PARAM_WORDS * Math.max(1, spawn));
    const workers: Worker[] = [];
    try {
      for (let slot = 0; slot < spawn; slot++) {
        const w = new Worker(file, { workerData: { memory, ctrl, params, slot } });
        workers.push(w);
        await new Promise<void>((resolve, reject) => {
          w.once('message', () => resolve());
          w.once('error', reject);
          w.once('exit', (code) => reject(new Error(`linalg worker exited during start-up (code ${code})`)));
        });
        w.removeAllListeners('exit');
        w.removeAllListeners('error');
        w.on('error', () => {});
        w.unref();
      }
    } catch (err) {
      await Promise.all(workers.map((w) => w.terminate()));
      throw err;
    }
    return new LinalgPool(memory, inst.exports as unknown as KernelExports, workers, ctrl, params);
  }

  /** Computing threads, the calling thread included (the `workers` option). */
  get workerCount(): number {
    return this.workers.length + 1;
  }

  /** How many products so far were split across threads (the rest ran on the calling thread alone). */
  get splitProducts(): number {
    return this.splits;
  }

  /** See Backend.reserve: grow the shared memory for a workspace of `bytes` and touch every page. */
  reserve(bytes: number): void {
    if (this.closed || this.busy) return;
    touchMemory(this.memory, RESERVED_BYTES, bytes, (end) =>
      growMemoryTo(this.memory, end, MAX_PAGES * PAGE),
    );
  }

  workspace(bytes: number): Workspace {
    if (this.closed) throw new Error('LinalgPool is closed');
    if (this.busy) throw new Error('LinalgPool: one computation at a time (its workspace is in use)');
    this.busy = true;
    const start = RESERVED_BYTES;
    this.top = start;
    const need = start + bytes;
    if (!growMemoryTo(this.memory, need, MAX_PAGES * PAGE)) {
      this.busy = false;
      throw new RangeError(
        `LinalgPool: needs ${Math.ceil(need / 2 ** 20)} MiB of shared memory, which this runtime cannot give (the limit is 4 GiB)`,
      );
    }
    const end = need;
    const take = (b: number) => {
      const p = this.top;
      this.top += Math.ceil(b / ALIGN) * ALIGN;
      if (this.top > end)
        throw new RangeError(`LinalgPool: workspace overflow (${this.top} > ${end}); this is a bug`);
      return p;
    };
    const buffer = this.memory.buffer as unknown as SharedArrayBuffer;
    handedOut.add(buffer);
    const f64 = (n: number) => new Float64Array(buffer, take(8 * n), n);
    return {
      label: this.label,
      f32: (n) => new Float32Array(buffer, take(4 * n), n),
      f64,
      gemm: this.gemm,
      mark: () => this.top,
      reset: (at) => {
        this.top = Math.min(this.top, at);
      },
      // The engine's optional kernels, wrapped by the same factory as the wasm backend's
      // (workspace.ts), so results equal one thread's.
      ...kernelOps(this.local, (x) => sameMemory(x, this.memory), f64),
      release: () => {
        this.busy = false;
      },
    };
  }

  /**
   * Split C's rows into blocks (multiples of 4, the kernels' register block, so every element sees
   * the same operation order as one thread: bit-identical results) that the calling thread and the
   * workers claim from a shared counter until none is left.
   */
  private readonly gemm: Gemm = (m, n, k, a, aOff, rsA, csA, b, bOff, ldb, c, cOff, ldc, accumulate) => {
    const same = (x: FloatArray) => sameMemory(x, this.memory);
    if (m === 0 || n === 0) return;
    if (!same(a) || !same(b) || !same(c)) {
      gemmTs(m, n, k, a, aOff, rsA, csA, b, bOff, ldb, c, cOff, ldc, accumulate);
      return;
    }
    const bpe = a.BYTES_PER_ELEMENT;
    const pa = a.byteOffset + bpe * aOff;
    const pb = b.byteOffset + bpe * bOff;
    const pc = c.byteOffset + bpe * cOff;
    const kind = a instanceof Float32Array ? KIND_F32 : KIND_F64;
    const kernel = kind === KIND_F32 ? this.local.gemmF32 : this.local.gemmF64;
    const acc = accumulate ? 1 : 0;
    const threads = this.workers.length + 1;
    const per = Math.ceil(m / threads / 4) * 4;
    if (threads === 1 || 2 * m * n * k < PARALLEL_MIN_FLOPS || per >= m) {
      kernel(m, n, k, pa, rsA, csA, pb, ldb, pc, ldc, acc);
      return;
    }
    this.splits++;
    const seq = ++this.seq;
    // About 8 blocks per thread: enough to even out a late start or a preempted thread, few enough
    // that each block still reuses the B panel over many rows.
    const chunk = Math.max(4, Math.ceil(m / threads / 8 / 4) * 4);
    const next = nextRowWord(this.workers.length);
    Atomics.store(this.ctrl, next, 0);
    const job = { kind, m, n, k, a: pa, rsA, csA, b: pb, ldb, c: pc, ldc, acc, chunk };
    for (let w = 0; w < this.workers.length; w++) {
      writeJob(this.params, w, job);
      Atomics.store(this.ctrl, w * CTRL_WORDS + CLAIM, seq);
      Atomics.store(this.ctrl, w * CTRL_WORDS + SEQ, seq);
      Atomics.notify(this.ctrl, w * CTRL_WORDS + SEQ);
    }
    const posted = this.workers.length;
    // The calling thread claims blocks like any worker; a throw here must still wait for the
    // workers, whose blocks write into the same memory.
    let failure: unknown = null;
    try {
      for (let i0 = Atomics.add(this.ctrl, next, chunk); i0 < m; i0 = Atomics.add(this.ctrl, next, chunk))
        kernel(
          Math.min(chunk, m - i0),
          n,
          k,
          pa + bpe * i0 * rsA,
          rsA,
          csA,
          pb,
          ldb,
          pc + bpe * i0 * ldc,
          ldc,
          acc,
        );
    } catch (err) {
      failure = err;
      Atomics.store(this.ctrl, next, m); // let the workers stop early
    }
    let workerFailed = false;
    for (let w = 0; w < posted; w++) {
      // A worker that has not woken yet (busy machine) is not waited for: withdraw its offer.
      if (Atomics.compareExchange(this.ctrl, w * CTRL_WORDS + CLAIM, seq, 0) === seq) continue;
      const at = w * CTRL_WORDS + DONE;
      let waited = 0;
      // The worker is on its last block: poll briefly before sleeping on the futex.
      for (let i = 0; i < SPIN && Atomics.load(this.ctrl, at) !== seq; i++);
      for (;;) {
        const done = Atomics.load(this.ctrl, at);
        if (done === seq) break;
        Atomics.wait(this.ctrl, at, done, WAIT_SLICE_MS);
        waited += WAIT_SLICE_MS;
        if (waited > 600_000)
          throw new Error('LinalgPool: a worker did not answer for 10 minutes; it has probably died');
      }
      if (Atomics.load(this.ctrl, w * CTRL_WORDS + STATUS) !== STATUS_OK) workerFailed = true;
    }
    if (failure) throw failure;
    if (workerFailed) throw new Error('LinalgPool: a worker kernel failed (out of bounds memory access?)');
  };

  /** Stop the workers. The pool cannot be used afterwards. */
  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    for (let w = 0; w < this.workers.length; w++) {
      Atomics.store(this.ctrl, w * CTRL_WORDS + SEQ, SHUTDOWN);
      Atomics.notify(this.ctrl, w * CTRL_WORDS + SEQ);
    }
    await Promise.all(this.workers.map((w) => w.terminate()));
  }
}

function sameMemory(x: FloatArray, memory: WebAssembly.Memory): boolean {
  // Every `memory.buffer` of a shared memory aliases the same bytes; accept the current one and any
  // buffer a workspace handed out.
  return x.buffer === memory.buffer || handedOut.has(x.buffer as SharedArrayBuffer);
}
const handedOut = new WeakSet<SharedArrayBuffer>();

let shared: Promise<LinalgPool> | null = null;

/**
 * The process-wide pool (created on first use with `options`), for services that factor many large
 * planes: `randomizedSvd(plane, k, { backend: await sharedLinalgPool() })`.
 */
export function sharedLinalgPool(options: PoolOptions = {}): Promise<LinalgPool> {
  if (!shared)
    shared = LinalgPool.create(options).catch((err) => {
      shared = null;
      throw err;
    });
  return shared;
}

/** Close the process-wide pool, if one was started. */
export async function closeSharedLinalgPool(): Promise<void> {
  const p = shared;
  shared = null;
  if (p) await (await p).close();
}
