/**
 * The options `rankfold compress` takes, declared once: the command parses with them (../commands/compress.ts),
 * and so does the launcher's look ahead at a compress run (./early-arena.ts), so both read the arguments alike.
 */
import { BUDGET_OPTIONS } from './budget-options';
import { flags } from './command';

export const COMPRESS_OPTIONS = {
  ...BUDGET_OPTIONS,
  ...flags('output tile layers page pixel-limit workers', 'json force compare stack lossless'),
};
