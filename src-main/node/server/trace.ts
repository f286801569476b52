/**
 * The back end's timing log, for finding where the app's seconds go: with RANKFOLD_TRACE=1 in the
 * environment of `rankfold serve` (or the desktop app), each call, session job, thread start and stage is
 * written to stderr as one line, `rankfold trace <wall-clock ms> <thread> <event>`. Worker threads inherit
 * the variable and write their own lines; the wall clock lets lines from different threads be sorted.
 * Off by default: nothing is written and nothing is measured.
 */
import { isMainThread, threadId } from 'node:worker_threads';

/** Whether RANKFOLD_TRACE=1 was set when this thread loaded. */
export const tracing = process.env.RANKFOLD_TRACE === '1';

/** Write one trace line (only when {@link tracing}). */
export function trace(event: string): void {
  if (!tracing) return;
  const who = isMainThread ? 'main' : `t${threadId}`;
  process.stderr.write(`rankfold trace ${Date.now()} ${who} ${event}\n`);
}
