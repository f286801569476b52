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

/** A file that cannot be read, decoded or trusted. The message names the file. */
export class InputError extends RankfoldError {
  constructor(file: string, problem: string, details: Record<string, unknown> = {}) {
    super(`${file}: ${problem}`, { file, ...details });
    this.name = 'InputError';
  }
}

/** A container (.rkf) that fails validation: truncated, bad CRC, unknown version, bad dimensions. */
export class FormatError extends RankfoldError {
  constructor(file: string, problem: string, details: Record<string, unknown> = {}) {
    super(`${file}: ${problem}`, { file, ...details });
    this.name = 'FormatError';
  }
}

/** An output that cannot be written (exists without --force, permission, disk full). */
export class OutputError extends RankfoldError {
  constructor(file: string, problem: string, details: Record<string, unknown> = {}) {
    super(`${file}: ${problem}`, { file, ...details });
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
