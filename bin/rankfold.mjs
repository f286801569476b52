#!/usr/bin/env node
import { existsSync } from 'node:fs';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';

const dist = (file) => fileURLToPath(new URL(`../dist/${file}`, import.meta.url));
const cli = dist('cli.js');
if (!existsSync(cli)) {
  process.stderr.write(
    'rankfold: the build is missing (dist/cli.js). Run `npm run build` in the Rankfold folder.\n',
  );
  process.exit(1);
}
// The script builds of the bundles, run with V8's code cache where one fits (src-main/node/boot/code-cache.ts),
// compile less at start-up; without them (an older build) the ESM bundles run.
const boot = dist('boot.cjs');
const scripts = existsSync(boot) && existsSync(dist('cli.cjs')) && existsSync(dist('early.cjs'));
const { runBundle } = scripts ? createRequire(import.meta.url)(boot) : {};
// For `compress` of a grey PNG, the whole plane's arena memory is made now and its pages touched on a pool
// thread while cli.js compiles (src-main/node/cli/args/early-arena.ts); any failure there just makes nothing.
const early = dist('early.js');
if (process.argv[2] === 'compress' && existsSync(early)) {
  try {
    (scripts ? runBundle(dist('early.cjs')).exports : await import(early)).leaveArenaAhead(process.argv.slice(2));
  } catch {
    // Nothing made ahead: the run makes its memory as it always did.
  }
}
if (scripts) runBundle(dist('cli.cjs'));
else await import(cli);
