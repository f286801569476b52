/**
 * One wrapper for every IPC handler: it checks that the sender is our page's main frame and that the
 * payload passes the contract's validator, logs each refusal with its reason, and returns results as
 * `{ ok, value }` / `{ ok: false, error }` so errors reach the page as plain `{ name, message }`.
 */
import type { IpcMain, IpcMainInvokeEvent } from 'electron';
import { API_METHODS, type ApiMethod, toErrorPayload, UsageError, validateRequest } from '../contract';
import { CHANNEL_PREFIX, UPLOAD_CHANNEL } from './channels';
import { checkSenderFrame } from './sender';

export { CHANNEL_PREFIX, EVENT_CHANNELS, UPLOAD_CHANNEL } from './channels';

export type IpcReply = { ok: true; value: unknown } | { ok: false; error: { name: string; message: string } };

/**
 * Check one call; returns the validated payload or the refusal reason. Pure, so tests need no Electron.
 */
export function admitCall(
  method: string,
  frame: { url: string; parent: unknown } | null | undefined,
  payload: unknown,
): { ok: true; method: ApiMethod; payload: unknown } | { ok: false; reason: string } {
  const bad = checkSenderFrame(frame);
  if (bad) return { ok: false, reason: bad };
  try {
    const r = validateRequest(method, payload);
    return { ok: true, method: r.method, payload: r.payload };
  } catch (err) {
    return { ok: false, reason: err instanceof Error ? err.message : String(err) };
  }
}

/** Validate an upload: a file name and its bytes. */
export function admitUpload(
  frame: { url: string; parent: unknown } | null | undefined,
  name: unknown,
  bytes: unknown,
) {
  const bad = checkSenderFrame(frame);
  if (bad) return { ok: false as const, reason: bad };
  if (typeof name !== 'string' || name.length === 0 || name.length > 255 || /[\\/\0]/.test(name))
    return { ok: false as const, reason: 'upload needs a plain file name' };
  if (!(bytes instanceof Uint8Array) && !(bytes instanceof ArrayBuffer))
    return { ok: false as const, reason: 'upload needs the file bytes' };
  return { ok: true as const, name, bytes: bytes instanceof ArrayBuffer ? new Uint8Array(bytes) : bytes };
}

export interface IpcTarget {
  call(method: ApiMethod, payload: unknown): Promise<unknown>;
  upload(name: string, data: Uint8Array): Promise<string>;
}

/** Register every handler through the one wrapper. */
export function registerIpc(
  ipc: IpcMain,
  target: IpcTarget,
  log: (msg: string) => void = console.warn,
): void {
  const refuse = (channel: string, reason: string): IpcReply => {
    log(`rankfold: refused IPC ${channel}: ${reason}`);
    return { ok: false, error: toErrorPayload(new UsageError(`Refused: ${reason}`)) };
  };
  for (const method of API_METHODS) {
    const channel = CHANNEL_PREFIX + method;
    ipc.handle(channel, async (event: IpcMainInvokeEvent, payload: unknown): Promise<IpcReply> => {
      const admitted = admitCall(method, event.senderFrame, payload);
      if (!admitted.ok) return refuse(channel, admitted.reason);
      try {
        return { ok: true, value: (await target.call(admitted.method, admitted.payload)) ?? null };
      } catch (err) {
        return { ok: false, error: toErrorPayload(err) };
      }
    });
  }
  ipc.handle(
    UPLOAD_CHANNEL,
    async (event: IpcMainInvokeEvent, name: unknown, bytes: unknown): Promise<IpcReply> => {
      const admitted = admitUpload(event.senderFrame, name, bytes);
      if (!admitted.ok) return refuse(UPLOAD_CHANNEL, admitted.reason);
      try {
        return { ok: true, value: await target.upload(admitted.name, admitted.bytes) };
      } catch (err) {
        return { ok: false, error: toErrorPayload(err) };
      }
    },
  );
}
