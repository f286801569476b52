/**
 * The scan encoder's side thread (src-main/node/parallel/side-thread.ts): takes each job it is offered unless
 * the caller has taken it back, runs it with the engine's own function (src-main/engine/lowrank/side-jobs.ts),
 * posts the answer and then marks the claim word, so the caller waiting on it finds the answer on its port.
 */
import { type MessagePort, parentPort, workerData } from 'node:worker_threads';
import { initEngine } from '../../engine/linalg';
import { SIDE_JOBS, type SideJobName } from '../../engine/lowrank/side-jobs';
import { CLAIM, type SideAnswer, type SideMessage } from '../parallel/side-thread';

const port = (workerData as { port: MessagePort }).port;
// The calling thread's engine runs its WebAssembly kernels (services/compress awaits initEngine): so must this
// one, for the same results. Jobs offered before then wait in the port (or are taken back by the caller).
await initEngine();
port.on('message', (m: SideMessage) => {
  if (Atomics.compareExchange(m.claim, 0, CLAIM.offered, CLAIM.taken) !== CLAIM.offered) return;
  let answer: SideAnswer;
  const transfer: ArrayBuffer[] = [];
  try {
    const value = (SIDE_JOBS[m.name as SideJobName] as (a: unknown) => unknown)(m.args);
    // A fresh top-level array moves; arrays inside an object (a coded plane's q, bytes) are copied, since
    // the coder may keep reusing their buffers.
    if (value instanceof Float64Array) transfer.push(value.buffer as ArrayBuffer);
    answer = { id: m.id, ok: true, value };
  } catch (err) {
    answer = { id: m.id, ok: false, message: (err as Error)?.message ?? String(err) };
  }
  port.postMessage(answer, transfer);
  Atomics.store(m.claim, 0, answer.ok ? CLAIM.done : CLAIM.failed);
  Atomics.notify(m.claim, 0);
});
parentPort?.postMessage('ready');
