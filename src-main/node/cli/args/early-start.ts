/**
 * What the CLI entry starts before a command's own modules load (about 60 ms on the 2-core machine of issue #12,
 * most of it sharp's): for `compress`, the encoder's side thread (../../parallel/side-thread.ts), which then loads
 * its code on the other core (~160 ms) while this thread loads sharp and decodes the scan. The entry hands it to
 * the command and closes it after the command has finished, on every path (errors and bad input included).
 * The side thread never changes an encoder's output, so starting one the command does not use changes nothing.
 */
import type { SideThread } from '../../parallel/side-thread';

/** Started early for the command; owned (and closed) by the CLI entry. */
export interface EarlyStart {
  side?: SideThread;
}

/**
 * True when `rankfold compress ARGS` will encode with two or more threads, as far as the arguments show before
 * the command parses them: not for help or `--stack`, nor with `--workers` 0 or 1 (the last one given counts).
 */
export function compressWantsSide(argv: readonly string[]): boolean {
  let workers: string | undefined;
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--') break;
    if (a === '--help' || a === '-h' || a === '--stack') return false;
    if (a === '--workers') workers = argv[i + 1];
    else if (a.startsWith('--workers=')) workers = a.slice('--workers='.length);
  }
  const n = workers === undefined ? Number.NaN : Number(workers);
  return !(Number.isInteger(n) && n < 2);
}

/** Start what command `name` with arguments `argv` will want (nothing for most commands). */
export async function startEarly(name: string, argv: readonly string[]): Promise<EarlyStart> {
  if (name !== 'compress' || !compressWantsSide(argv)) return {};
  const { SideThread } = await import('../../parallel/side-thread');
  return { side: SideThread.start() };
}
