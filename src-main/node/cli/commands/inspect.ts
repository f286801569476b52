import { RankfoldError } from '../../../contract';
import type { Command } from '../command';

// Placeholder until the issue that owns `rankfold inspect` lands.
export const command: Command = {
  name: 'inspect',
  summary: 'inspect',
  help: 'rankfold inspect: not built yet.',
  async run() {
    throw new RankfoldError('`rankfold inspect` is not built yet in this version.');
  },
};
