import { RankfoldError } from '../../../contract';
import type { Command } from '../command';

// Placeholder until the issue that owns `rankfold expand` lands.
export const command: Command = {
  name: 'expand',
  summary: 'expand',
  help: 'rankfold expand: not built yet.',
  async run() {
    throw new RankfoldError('`rankfold expand` is not built yet in this version.');
  },
};
