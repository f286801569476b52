/**
 * What the CLI entry starts before a command's own modules load (about 60 ms on the 2-core machine of issue #12,
 * most of it sharp's): for `compress`, the encoder's side thread (../../parallel/side-thread.ts), which then loads
 * its code on the other core (~160 ms) while this thread loads sharp and decodes the scan. The entry hands it to
 * the command and closes it after the command has finished, on every path (errors and bad input included).
 * The side thread never changes an encoder's output, so starting one the command does not use changes nothing.
 * It also takes the whole plane's arena memory the launcher made before this code loaded (./early-arena.ts).
 */
import type { SideThread } from '../../parallel/side-thread';
import type { ArenaAhead } from '../../services/arenas-ahead';
import { compressWantsSide, takeArenaAhead } from './early-arena';

/** Started early for the command; owned (and closed, or stopped) by the CLI entry. */
export interface EarlyStart {
  side?: SideThread;
  /** A whole plane's arena memory made by the launcher, its first touch under way (for `compress` only). */
  arena?: ArenaAhead;
}

/** Start what command `name` with arguments `argv` will want (nothing for most commands). */
export async function startEarly(name: string, argv: readonly string[]): Promise<EarlyStart> {
  const arena = takeArenaAhead();
  if (name !== 'compress' || !compressWantsSide(argv)) {
    await arena?.touch.stop();
    return {};
  }
  const { SideThread } = await import('../../parallel/side-thread');
  return { side: SideThread.start(), ...(arena ? { arena } : {}) };
}
