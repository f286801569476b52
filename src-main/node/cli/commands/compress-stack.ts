/**
 * Stack mode of `rankfold compress --stack` (joint compression of frame series).
 * Placeholder: the stack-mode work replaces this file with the real `runStack`.
 */
import { RankfoldError } from '../../../contract';
import type { CliIO } from '../command';

export async function runStack(_argv: string[], _io: CliIO): Promise<number> {
  throw new RankfoldError('compress --stack: stack mode is not available in this version yet.');
}
