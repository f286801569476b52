#!/usr/bin/env node
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const cli = fileURLToPath(new URL('../dist/cli.js', import.meta.url));
if (!existsSync(cli)) {
  process.stderr.write('rankfold: the build is missing (dist/cli.js). Run `npm run build` in the Rankfold folder.\n');
  process.exit(1);
}
await import(cli);
