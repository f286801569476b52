#!/usr/bin/env node
// How many real encodes `compress --min-psnr` (or `--bpp`) takes, and the bytes and PSNR it lands, over a set
// of scans × budgets, for one build. Not part of `npm run bench` (it needs scans that are not in the repo):
//
//   node bench/floor-landing.mjs --root DIR --out runs.json [--images a.png,b.png] [--floors 34,38,42,43.6,46]
//                                [--bpp 0.1,0.5]
//   node bench/floor-landing.mjs --compare before.json after.json
//
// --root is the checkout whose built CLI (bin/rankfold.mjs) runs (default: this one). Each case records the
// encodes, bytes, PSNR and the user CPU seconds (/usr/bin/time; noisy on a loaded machine, report `uptime`).
// --compare prints one line per case and the totals: encodes, bytes (after/before) and files under a floor.
import { spawnSync } from 'node:child_process';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const args = process.argv.slice(2);
const opt = (name, dflt) => {
  const i = args.indexOf(name);
  return i >= 0 ? args[i + 1] : dflt;
};
const list = (s) => (s ? s.split(',').filter(Boolean) : []);

if (args[0] === '--compare') {
  const [a, b] = [args[1], args[2]].map((f) => JSON.parse(readFileSync(f, 'utf8')));
  const key = (c) => `${c.image} ${c.kind} ${c.value}`;
  const before = new Map(a.map((c) => [key(c), c]));
  const tot = { ea: 0, eb: 0, ba: 0, bb: 0, under: 0 };
  for (const c of b) {
    const p = before.get(key(c));
    if (!p) continue;
    const under = c.kind === 'min-psnr' && c.psnr < Number(c.value);
    if (under) tot.under++;
    tot.ea += p.encodes;
    tot.eb += c.encodes;
    tot.ba += p.bytes;
    tot.bb += c.bytes;
    console.log(
      `${key(c).padEnd(28)} enc ${p.encodes}→${c.encodes}  bytes ${p.bytes}→${c.bytes} ` +
        `(${((100 * (c.bytes - p.bytes)) / p.bytes).toFixed(2)}%)  psnr ${p.psnr.toFixed(3)}→${c.psnr.toFixed(3)}` +
        `  user ${p.user}→${c.user}${under ? '  UNDER FLOOR' : ''}`,
    );
  }
  console.log(
    `total encodes ${tot.ea}→${tot.eb}, bytes ${tot.ba}→${tot.bb} (${((100 * (tot.bb - tot.ba)) / tot.ba).toFixed(3)}%), ` +
      `${tot.under} under the floor`,
  );
  process.exit(0);
}

const here = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const root = resolve(opt('--root', here));
const out = opt('--out', join(tmpdir(), 'floor-landing.json'));
const images = list(opt('--images', ''));
const cases = [
  ...list(opt('--floors', '34,38,42,43.6,46')).map((v) => ({ kind: 'min-psnr', value: v })),
  ...list(opt('--bpp', '')).map((v) => ({ kind: 'bpp', value: v })),
];
const work = join(tmpdir(), `floor-landing-${process.pid}`);
mkdirSync(work, { recursive: true });
const rows = [];
for (const img of images)
  for (const c of cases) {
    const file = join(work, `${basename(img)}-${c.kind}-${c.value}.rkf`);
    const timeFile = `${file}.time`;
    const r = spawnSync(
      '/usr/bin/time',
      [
        '-f',
        '%U %S %e',
        '-o',
        timeFile,
        process.execPath,
        join(root, 'bin', 'rankfold.mjs'),
        'compress',
      ].concat([img, '-o', file, `--${c.kind}`, c.value, '--json', '--force']),
      { encoding: 'utf8', maxBuffer: 1 << 26 },
    );
    if (r.status !== 0) {
      console.error(`${img} --${c.kind} ${c.value}: failed: ${r.stderr.trim().slice(0, 300)}`);
      continue;
    }
    const j = JSON.parse(r.stdout);
    const [user, sys, wall] = readFileSync(timeFile, 'utf8').trim().split(/\s+/).map(Number);
    const row = {
      image: basename(img),
      kind: c.kind,
      value: c.value,
      bytes: j.outputBytes,
      psnr: j.psnr,
      encodes: j.layers?.residualEncodes ?? 0,
      chosen: j.layers?.chosen,
      user,
      sys,
      wall,
    };
    rows.push(row);
    console.log(JSON.stringify(row));
    writeFileSync(out, JSON.stringify(rows, null, 1));
  }
