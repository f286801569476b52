import { RankfoldError } from '../../../contract';
import type { Command } from '../command';

// Placeholder until the issue that owns `rankfold compress` lands.
export const command: Command = {
  name: 'compress',
  summary: 'compress',
  help: 'rankfold compress: not built yet.',
  async run() {
    throw new RankfoldError('`rankfold compress` is not built yet in this version.');
  },
};
