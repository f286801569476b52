// The two worker pools the pool tests compare (one worker, two workers), made once per test file.
// Uses the built worker dist/workers/linalg.js (run `npm run build` first, as `npm test` does).
import { afterAll, beforeAll } from 'vitest';
import { initEngine } from '../../src-main/engine/linalg';
import { LinalgPool } from '../../src-main/node/parallel/pool';

export interface TwoPools {
  one: LinalgPool;
  two: LinalgPool;
}

/**
 * Create a 1-worker and a 2-worker pool before the file's tests and close them after; `take` receives them,
 * `after` runs first at the end (e.g. to reset a process-wide backend).
 */
export function useTwoPools(take: (pools: TwoPools) => void, after?: () => void | Promise<void>): void {
  let pools: TwoPools | undefined;
  beforeAll(async () => {
    await initEngine();
    pools = { one: await LinalgPool.create({ workers: 1 }), two: await LinalgPool.create({ workers: 2 }) };
    take(pools);
  });
  afterAll(async () => {
    await after?.();
    await pools?.one.close();
    await pools?.two.close();
  });
}
