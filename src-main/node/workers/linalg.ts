/**
 * Linear-algebra worker: runs its share of matrix products on the shared WebAssembly memory.
 * Started by src-main/node/parallel/pool.ts; it blocks in Atomics.wait between jobs, so it needs no
 * event loop and answers within microseconds.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { wasmBase64 } from '../../engine/linalg/wasm/generated/kernels-shared';
import { decodeBase64, type KernelExports } from '../../engine/linalg/wasm/runtime';
import {
  CLAIM,
  CTRL_WORDS,
  DONE,
  KIND_F32,
  type LinalgWorkerData,
  nextRowWord,
  readJob,
  SEQ,
  SHUTDOWN,
  STATUS,
  STATUS_ERROR,
  STATUS_OK,
} from '../parallel/protocol';

const data = workerData as LinalgWorkerData;
const module = new WebAssembly.Module(decodeBase64(wasmBase64));
const instance = new WebAssembly.Instance(module, {
  env: {
    memory: data.memory,
    abort: () => {
      throw new Error('kernel abort');
    },
  },
});
const k = instance.exports as unknown as KernelExports;
const ctrl = new Int32Array(data.ctrl);
const params = new Float64Array(data.params);
const c0 = data.slot * CTRL_WORDS;
const next = nextRowWord(ctrl.length / CTRL_WORDS - 1);
parentPort?.postMessage('ready');
let seq = Atomics.load(ctrl, c0 + SEQ);
/** Loads of `seq` before sleeping (~50–100 µs): products in a factorisation come back to back. */
const SPIN = 20000;
for (;;) {
  for (let i = 0; i < SPIN && Atomics.load(ctrl, c0 + SEQ) === seq; i++);
  Atomics.wait(ctrl, c0 + SEQ, seq);
  seq = Atomics.load(ctrl, c0 + SEQ);
  if (seq === SHUTDOWN) break;
  // Take the offer; if the caller already withdrew it (it did every block itself), go back to sleep.
  if (Atomics.compareExchange(ctrl, c0 + CLAIM, seq, -seq) !== seq) continue;
  let status = STATUS_OK;
  try {
    const { kind, m, n, k: kk, a, rsA, csA, b, ldb, c, ldc, acc, chunk } = readJob(params, data.slot);
    const f32 = kind === KIND_F32;
    const f = f32 ? k.gemmF32 : k.gemmF64;
    const bpe = f32 ? 4 : 8;
    for (let i0 = Atomics.add(ctrl, next, chunk); i0 < m; i0 = Atomics.add(ctrl, next, chunk))
      f(Math.min(chunk, m - i0), n, kk, a + bpe * i0 * rsA, rsA, csA, b, ldb, c + bpe * i0 * ldc, ldc, acc);
  } catch {
    status = STATUS_ERROR;
  }
  Atomics.store(ctrl, c0 + STATUS, status);
  Atomics.store(ctrl, c0 + DONE, seq);
  Atomics.notify(ctrl, c0 + DONE);
}
