import { RankfoldError } from '../../../contract';
import type { Command } from '../command';

// Placeholder until the issue that owns `rankfold serve` lands.
export const command: Command = {
  name: 'serve',
  summary: 'serve',
  help: 'rankfold serve: not built yet.',
  async run() {
    throw new RankfoldError('`rankfold serve` is not built yet in this version.');
  },
};
