/**
 * Errors that cross a worker, IPC or HTTP boundary travel as plain `{ name, message, details }`.
 * The message is always a sentence a user can act on, and names the file when there is one.
 */
export interface ErrorPayload {
  name: string;
  message: string;
  details?: Record<string, unknown>;
}

/** Base class of every error Rankfold raises on purpose. */
export class RankfoldError extends Error {
  readonly details: Record<string, unknown>;
  constructor(message: string, details: Record<string, unknown> = {}) {
    super(message);
    this.name = 'RankfoldError';
    this.details = details;
  }
  toPayload(): ErrorPayload {
    return { name: this.name, message: this.message, details: this.details };
  }
}

/** A wrong command-line argument or request field. CLI exit code 1. */
export class UsageError extends RankfoldError {
  constructor(message: string, details: Record<string, unknown> = {}) {
    super(message, details);
    this.name = 'UsageError';
  }
}

/** Names longer than this many characters are shortened in messages (the full name stays in `details.file`). */
export const MAX_SHOWN_NAME = 160;

/**
 * A file name as messages show it: as the user gave it, except that control characters (a newline in a
 * name would split the one-sentence message) are written as `\n`, `\t` or `\u0007`, and a name longer than
 * {@link MAX_SHOWN_NAME} characters keeps its first 60 and last 60 characters around an ellipsis with the
 * count left out, so the folder and the file name stay recognisable.
 */
export function displayName(file: string): string {
  // biome-ignore lint/suspicious/noControlCharactersInRegex: control characters are what is escaped here
  const shown = String(file).replace(/[\u0000-\u001f\u007f]/g, (c) =>
    c === '\n'
      ? '\\n'
      : c === '\t'
        ? '\\t'
        : c === '\r'
          ? '\\r'
          : `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`,
  );
  const chars = Array.from(shown);
  if (chars.length <= MAX_SHOWN_NAME) return shown;
  return `${chars.slice(0, 60).join('')}…(${chars.length - 120} characters left out)…${chars.slice(-60).join('')}`;
}

/** Reports of single-file services may carry warnings: metadata that was dropped or changed, one sentence each. */
export interface WithWarnings {
  warnings?: string[];
}

/** A file that cannot be read, decoded or trusted. The message names the file. */
export class InputError extends RankfoldError {
  constructor(file: string, problem: string, details: Record<string, unknown> = {}) {
    super(`${displayName(file)}: ${problem}`, { file, ...details });
    this.name = 'InputError';
  }
}

/** A container (.rkf) that fails validation: truncated, bad CRC, unknown version, bad dimensions. */
export class FormatError extends RankfoldError {
  constructor(file: string, problem: string, details: Record<string, unknown> = {}) {
    super(`${displayName(file)}: ${problem}`, { file, ...details });
    this.name = 'FormatError';
  }
}

/** An output that cannot be written (exists without --force, permission, disk full). */
export class OutputError extends RankfoldError {
  constructor(file: string, problem: string, details: Record<string, unknown> = {}) {
    super(`${displayName(file)}: ${problem}`, { file, ...details });
    this.name = 'OutputError';
  }
}

/** A job stopped on request. */
export class CancelledError extends RankfoldError {
  constructor(what = 'the job') {
    super(`${what} was cancelled`);
    this.name = 'CancelledError';
  }
}

/** Turn anything thrown into a payload that survives structured cloning or JSON. */
export function toErrorPayload(err: unknown): ErrorPayload {
  if (err instanceof RankfoldError) return err.toPayload();
  if (err instanceof Error) return { name: err.name || 'Error', message: err.message };
  return { name: 'Error', message: String(err) };
}

/** Rebuild a thrown error from a payload (the inverse of {@link toErrorPayload}, by name). */
export function fromErrorPayload(p: ErrorPayload): RankfoldError {
  const e = new RankfoldError(p.message, p.details ?? {});
  e.name = p.name;
  return e;
}
