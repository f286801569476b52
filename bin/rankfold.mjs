#!/usr/bin/env node
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const cli = fileURLToPath(new URL('../dist/cli.js', import.meta.url));
if (!existsSync(cli)) {
  process.stderr.write(
    'rankfold: the build is missing (dist/cli.js). Run `npm run build` in the Rankfold folder.\n',
  );
  process.exit(1);
}
// For `compress` of a grey PNG, the whole plane's arena memory is made now and its pages touched on a pool
// thread while cli.js compiles (src-main/node/cli/args/early-arena.ts); any failure there just makes nothing.
const early = fileURLToPath(new URL('../dist/early.js', import.meta.url));
if (process.argv[2] === 'compress' && existsSync(early)) {
  try {
    (await import(early)).leaveArenaAhead(process.argv.slice(2));
  } catch {
    // Nothing made ahead: the run makes its memory as it always did.
  }
}
await import(cli);
