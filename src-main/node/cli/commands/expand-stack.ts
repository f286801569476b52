/**
 * `rankfold expand --frame I` (one frame of a stack container).
 * Placeholder: the stack-mode work replaces this file with the real `runStack`.
 */
import { RankfoldError } from '../../../contract';
import type { CliIO } from '../command';

export async function runStack(_argv: string[], _io: CliIO): Promise<number> {
  throw new RankfoldError('expand --frame: stack containers are not available in this version yet.');
}
