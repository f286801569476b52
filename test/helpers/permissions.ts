/**
 * Run a command so that file mode bits bind, even when the tests run as root.
 *
 * Root ignores mode bits through the capabilities CAP_DAC_OVERRIDE and CAP_DAC_READ_SEARCH
 * (capabilities(7), Linux man-pages). As root, the command is started through util-linux's `setpriv`
 * with both removed from its capability bounding set, so it keeps root's identity (it can still read
 * the checkout and node_modules wherever they are) but a file or folder without permission refuses it
 * as it would refuse any user. As another user, the command runs as it is.
 */
import { type SpawnSyncOptionsWithStringEncoding, spawnSync } from 'node:child_process';

const isRoot = process.getuid?.() === 0;

export function spawnWithModeBits(
  command: string,
  args: string[],
  options: Omit<SpawnSyncOptionsWithStringEncoding, 'encoding'> = {},
) {
  const [cmd, argv] = isRoot
    ? ['setpriv', ['--bounding-set=-dac_override,-dac_read_search', '--', command, ...args]]
    : [command, args];
  return spawnSync(cmd as string, argv as string[], { ...options, encoding: 'utf8' });
}
