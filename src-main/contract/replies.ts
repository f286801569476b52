/**
 * How a call's outcome travels over IPC and HTTP: `{ ok: true, value }` or `{ ok: false, error }` with the
 * error as a plain {@link ErrorPayload}. Both transports build replies with {@link replyTo} and both clients
 * read them with {@link unwrapReply}, so a refusal reads the same on either.
 */
import { type ErrorPayload, fromErrorPayload, toErrorPayload } from './errors';

export type Reply = { ok: true; value: unknown } | { ok: false; error: ErrorPayload };

/** Settle a call into a reply (an undefined value travels as null). */
export async function replyTo(run: () => unknown): Promise<Reply> {
  try {
    return { ok: true, value: (await run()) ?? null };
  } catch (err) {
    return { ok: false, error: toErrorPayload(err) };
  }
}

/** The value of a reply, or its error thrown again (by name, with its message and details). */
export function unwrapReply(r: unknown, fallback = 'request failed'): unknown {
  const reply = r as Partial<{ ok: boolean; value: unknown; error: ErrorPayload }> | undefined;
  if (reply?.ok) return reply.value;
  throw fromErrorPayload(reply?.error ?? { name: 'Error', message: fallback });
}
