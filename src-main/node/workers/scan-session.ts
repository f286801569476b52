/**
 * Worker thread behind one open scan in the app (browser mode and Electron alike). It decodes the scan
 * once, keeps its planes, and runs the heavy jobs on them (factor, evaluate at a budget, clean, save),
 * so the server's and Electron's event loops never do heavy work. Cancel = the host terminates it.
 *
 * Messages in:  { id, op, args }. Messages out: { id, ok, value } | { id, ok: false, error } | { id, progress }.
 */
import { readlinkSync } from 'node:fs';
import { setPriority } from 'node:os';
import { parentPort, workerData } from 'node:worker_threads';
import { type DecodedImage, toErrorPayload } from '../../contract';
import { allowFactorPool } from '../parallel/factor-path';
import { readyEngine } from '../server/factor';
import { runSessionOp, type SessionOp } from '../server/session-ops';

if (!parentPort) throw new Error('scan-session must run as a worker thread');
/**
 * Nice value of a background session (the deeper factorisation after opening): it uses the cores the
 * foreground jobs leave idle, so exact figures the user waits for are not slowed by it. Linux keeps a nice
 * value per thread (setpriority(2), NOTES), and threads started afterwards (the factorisation's pool) take
 * it on; lowering needs no privilege. Elsewhere the thread keeps the normal priority.
 */
const BACKGROUND_NICE = 5;
if ((workerData as { background?: boolean } | null)?.background)
  try {
    // /proc/thread-self → "<pid>/task/<tid>": this thread's id, which setpriority takes on Linux.
    setPriority(Number(readlinkSync('/proc/thread-self').split('/').pop()), BACKGROUND_NICE);
  } catch {
    // Not Linux (no /proc/thread-self): normal priority.
  }
// The page's whole-plane factorisations take the CLI's fast path: kernels compiled, the thread pool
// started and both warmed up now, while the thread waits for its scan (one scan computes at a time).
allowFactorPool();
void readyEngine();
const port = parentPort;
const state: { image?: DecodedImage } = {};

port.on('message', async (msg: { id: number; op: SessionOp; args: Record<string, unknown> }) => {
  try {
    const { value, transfer } = await runSessionOp(state, msg.op, msg.args, (done, total, stage) =>
      port.postMessage({ id: msg.id, progress: { done, total, stage } }),
    );
    port.postMessage({ id: msg.id, ok: true, value }, transfer ?? []);
  } catch (err) {
    port.postMessage({ id: msg.id, ok: false, error: toErrorPayload(err) });
  }
});
