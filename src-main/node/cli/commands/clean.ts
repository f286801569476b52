import { RankfoldError } from '../../../contract';
import type { Command } from '../command';

// Placeholder until the issue that owns `rankfold clean` lands.
export const command: Command = {
  name: 'clean',
  summary: 'clean',
  help: 'rankfold clean: not built yet.',
  async run() {
    throw new RankfoldError('`rankfold clean` is not built yet in this version.');
  },
};
