import { RankfoldError } from '../../../contract';
import type { Command } from '../command';

// Placeholder until the issue that owns `rankfold batch` lands.
export const command: Command = {
  name: 'batch',
  summary: 'batch',
  help: 'rankfold batch: not built yet.',
  async run() {
    throw new RankfoldError('`rankfold batch` is not built yet in this version.');
  },
};
