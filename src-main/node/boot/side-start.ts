/**
 * The side thread's entry (../parallel/side-thread.ts starts it; built as dist/workers/side-start.cjs): runs
 * the side worker's script bundle, dist/workers/side.cjs (../workers/side.ts), with V8's code cache
 * (./code-cache.ts), as the launcher does for the CLI.
 */
import { join } from 'node:path';
import { runBundle } from './code-cache';

runBundle(join(__dirname, 'side.cjs'));
