/**
 * Where the built batch worker lives: dist/workers/batch.js beside the running bundle (dist/cli.js), or in
 * the checkout's dist/ when running from sources (tests). RANKFOLD_BATCH_WORKER overrides both.
 */
import { existsSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { RankfoldError } from '../../contract';

export function batchWorkerFile(): string {
  const env = process.env.RANKFOLD_BATCH_WORKER;
  if (env) return resolve(env);
  const here = dirname(fileURLToPath(import.meta.url));
  const candidates = [join(here, 'workers', 'batch.js'), join(here, '..', 'workers', 'batch.js')];
  // From sources: walk up to the checkout and use its build.
  let d = here;
  for (let i = 0; i < 6; i++) {
    candidates.push(join(d, 'dist', 'workers', 'batch.js'));
    d = dirname(d);
  }
  const found = candidates.find((c) => existsSync(c));
  if (!found)
    throw new RankfoldError(
      'the batch worker (dist/workers/batch.js) is missing; run `npm run build` in the Rankfold folder',
    );
  return found;
}
