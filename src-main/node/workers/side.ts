/**
 * The scan encoder's side thread (src-main/node/parallel/side-thread.ts): takes each job it is offered unless
 * the caller has taken it back, runs it with the engine's own function (src-main/engine/lowrank/side-jobs.ts),
 * posts the answer and then marks the claim word, so the caller waiting on it finds the answer on its port.
 * While a long job lets pieces through (src-main/engine/lowrank/side-yield.ts), the arena pieces waiting in
 * the port are run at once and any other job is kept, in order, for after it.
 */
import { type MessagePort, parentPort, receiveMessageOnPort, workerData } from 'node:worker_threads';
import { initEngine } from '../../engine/linalg';
import { SIDE_JOBS, type SideJobName } from '../../engine/lowrank/side-jobs';
import { setLetPiecesThrough } from '../../engine/lowrank/side-yield';
import { CLAIM, type SideAnswer, type SideMessage } from '../parallel/side-thread';

const port = (workerData as { port: MessagePort }).port;
// The calling thread's engine runs its WebAssembly kernels (services/compress awaits initEngine): so must this
// one, for the same results. Jobs offered before then wait in the port (or are taken back by the caller).
await initEngine();
/** Jobs read from the port while a long job ran, to run after it, in the order they came. */
const later: SideMessage[] = [];
let inPiece = false;
setLetPiecesThrough(() => {
  if (inPiece) return;
  inPiece = true;
  try {
    for (let r = receiveMessageOnPort(port); r; r = receiveMessageOnPort(port)) {
      const m = r.message as SideMessage;
      // A first touch of pages ('touch') is idle-time work: it waits like any other job.
      if (m.name === 'arena-pass' && (m.args as { op?: string }).op !== 'touch') serve(m);
      else later.push(m);
    }
  } finally {
    inPiece = false;
  }
});
port.on('message', (m: SideMessage) => {
  serve(m);
  for (let next = later.shift(); next; next = later.shift()) serve(next);
});

function serve(m: SideMessage): void {
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
}
parentPort?.postMessage('ready');
