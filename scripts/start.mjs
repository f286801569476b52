#!/usr/bin/env node
// `npm start`: open the desktop window when Electron's runtime is installed; otherwise try Electron's
// own install step once (it needs internet), and if that fails start browser mode (`rankfold serve`).
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const require = createRequire(join(root, 'package.json'));

function electronBinary() {
  try {
    const dir = dirname(require.resolve('electron/package.json'));
    const pathTxt = join(dir, 'path.txt');
    if (!existsSync(pathTxt)) return { dir, bin: null };
    const bin = join(dir, 'dist', readFileSync(pathTxt, 'utf8').trim());
    return { dir, bin: existsSync(bin) ? bin : null };
  } catch {
    return { dir: null, bin: null };
  }
}

let { dir, bin } = electronBinary();
if (!bin && dir && process.env.RANKFOLD_NO_ELECTRON_FETCH !== '1') {
  console.error(
    'rankfold: Electron runtime not installed; trying to fetch it (node node_modules/electron/install.js)…',
  );
  const r = spawnSync(process.execPath, [join(dir, 'install.js')], {
    stdio: ['ignore', 'inherit', 'pipe'],
    encoding: 'utf8',
    timeout: 120_000,
    env: { ...process.env, ELECTRON_SKIP_BINARY_DOWNLOAD: '' },
  });
  if (r.status === 0) ({ bin } = electronBinary());
  else {
    const why =
      (r.error?.message ?? r.stderr ?? '').split('\n').find((l) => l.trim()) ?? `exit status ${r.status}`;
    console.error(`rankfold: the download did not work (${why.trim()}).`);
  }
}
const mainJs = join(root, 'dist', 'electron', 'main.cjs');
if (bin && existsSync(mainJs)) {
  const child = spawn(bin, [root, ...process.argv.slice(2)], { stdio: 'inherit' });
  child.on('exit', (code) => process.exit(code ?? 0));
} else {
  console.error(
    'rankfold: the Electron runtime is not available (it could not be downloaded), so Rankfold opens in browser mode instead.\n' +
      'To get the desktop window, run `node node_modules/electron/install.js` on a machine with internet access, then `npm start` again.',
  );
  const child = spawn(
    process.execPath,
    [join(root, 'bin', 'rankfold.mjs'), 'serve', ...process.argv.slice(2)],
    { stdio: 'inherit' },
  );
  child.on('exit', (code) => process.exit(code ?? 0));
}
