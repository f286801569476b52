/**
 * Which encodes try the residual-only shortcut (./residual-first.ts through ./scan-finish.ts), told from the
 * scan's size and the options alone: the CLI's launcher asks before the encoder's code has loaded
 * (../../node/cli/args/early-arena.ts), so this module imports only constants.
 */
import type { Budget } from '../../contract';
import { RESIDUAL_MAX_PIXELS } from '../codec/residual-limit';
import { AUTO_PROBE_PIXELS } from './centred-crop';

/**
 * Whether the encode of a width×height scan tries the residual-only shortcut (./scan-finish.ts
 * residualFirstFor): large scans, two layers allowed, a byte budget or a PSNR floor. Such an encode first
 * analyses its whole planes in arenas of their size (../../node/services/arenas-ahead.ts makes those ahead).
 */
export function residualFirstApplies(
  width: number,
  height: number,
  opts: { layers?: 'auto' | 'base'; budget: Budget },
): boolean {
  const kind = opts.budget.kind;
  return (
    opts.layers === 'auto' &&
    width * height > AUTO_PROBE_PIXELS * 1.5 &&
    width * height <= RESIDUAL_MAX_PIXELS &&
    (kind === 'bytes' || kind === 'bpp' || kind === 'percent' || kind === 'psnr')
  );
}
