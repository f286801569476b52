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

/**
 * What a user can do about an error, named by a code so each front end words it its own way: the CLI
 * prints the message as raised (it ends with the command-line advice), the app drops that advice and
 * says what to do in the app. Set where the error is raised, with {@link hinted}.
 */
export type Hint = 'overwrite' | 'whole-plane' | 'pixel-limit' | 'timeout' | 'psnr-budget';

/** The `details` of an error whose message ends with `advice` (the CLI's wording of `hint`). */
export function hinted(hint: Hint, advice: string): { hint: Hint; advice: string } {
  return { hint, advice };
}

/** An error's message without its CLI advice, and the hint code, if the error carries one. */
export function adviceOf(err: { message: string; details?: Record<string, unknown> }): {
  core: string;
  hint?: Hint;
} {
  const d = err.details ?? {};
  const hint = typeof d.hint === 'string' ? (d.hint as Hint) : undefined;
  const advice = typeof d.advice === 'string' ? d.advice : '';
  const at = advice ? err.message.lastIndexOf(advice) : -1;
  const core = at >= 0 ? err.message.slice(0, at) + err.message.slice(at + advice.length) : err.message;
  return { core, hint };
}
