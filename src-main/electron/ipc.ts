/**
 * One wrapper for every IPC handler: it checks that the sender is our page's main frame and that the
 * payload passes the contract's validator, logs each refusal with its reason, and returns results as the
 * contract's replies (`{ ok, value }` / `{ ok: false, error }`, src-main/contract/replies.ts), built the same
 * way as browser mode's, so a refusal reads the same on either transport.
 */
import type { IpcMain, IpcMainInvokeEvent } from 'electron';
import {
  API_METHODS,
  type ApiMethod,
  carries,
  type ErrorPayload,
  type Reply,
  replyTo,
  toErrorPayload,
  UsageError,
  validateRequest,
} from '../contract';
import { CHANNEL_PREFIX } from './channels';
import { checkSenderFrame } from './sender';

type IpcReply = Reply;

/**
 * Check one call; returns the validated payload, or the refusal's reason and the error the page receives
 * (a foreign sender gets `Refused: …`; a bad payload gets the validator's own message, as over HTTP).
 * Pure, so tests need no Electron.
 */
export function admitCall(
  method: string,
  frame: { url: string; parent: unknown } | null | undefined,
  payload: unknown,
): { ok: true; method: ApiMethod; payload: unknown } | { ok: false; reason: string; error: ErrorPayload } {
  const bad = checkSenderFrame(frame);
  if (bad) return { ok: false, reason: bad, error: toErrorPayload(new UsageError(`Refused: ${bad}`)) };
  try {
    const r = validateRequest(method, payload, 'ipc');
    return { ok: true, method: r.method, payload: r.payload };
  } catch (err) {
    return {
      ok: false,
      reason: err instanceof Error ? err.message : String(err),
      error: toErrorPayload(err),
    };
  }
}

export interface IpcTarget {
  call(method: ApiMethod, payload: unknown): Promise<unknown>;
}

/** Register every method the contract lets IPC carry, through the one wrapper. */
export function registerIpc(
  ipc: Pick<IpcMain, 'handle'>,
  target: IpcTarget,
  log: (msg: string) => void = console.warn,
): void {
  for (const method of API_METHODS.filter((m) => carries(m, 'ipc'))) {
    const channel = CHANNEL_PREFIX + method;
    ipc.handle(channel, async (event: IpcMainInvokeEvent, payload: unknown): Promise<IpcReply> => {
      const admitted = admitCall(method, event.senderFrame, payload);
      if (!admitted.ok) {
        log(`rankfold: refused IPC ${channel}: ${admitted.reason}`);
        return { ok: false, error: admitted.error };
      }
      return replyTo(() => target.call(admitted.method, admitted.payload));
    });
  }
}
