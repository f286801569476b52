/**
 * Stack worker: takes frames of a `compress --stack` job from the shared counter beside the calling thread
 * (src-main/node/services/stack-threads.ts) and answers when no frame is left.
 */
import { parentPort } from 'node:worker_threads';
import { toErrorPayload } from '../../contract';
import { runShare, type StackThreadJob, type StackThreadReply } from '../services/stack-threads';

parentPort?.on('message', (t: StackThreadJob) => {
  let reply: StackThreadReply;
  try {
    runShare(t);
    reply = { ok: true };
  } catch (err) {
    reply = { ok: false, error: toErrorPayload(err) };
  }
  parentPort?.postMessage(reply);
});
