#!/usr/bin/env node
// Byte-identity check for restructuring work: runs the built CLI on the samples with a fixed set
// of commands and compares the SHA-256 of every output (files, and --json reports with timings
// and paths taken out) with test/fixtures/golden-outputs.json.
//   node scripts/golden-outputs.mjs          compare; exit 1 and list what differs
//   node scripts/golden-outputs.mjs --write  record the current outputs as the reference
//   --only REGEX                            run (and compare or record) only the jobs whose name matches,
//                                           e.g. --only 'compress|expand' or --only clean; the rest of the
//                                           reference is kept as it is
// A change that is meant to alter an output records it again with --write, in its own commit.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = fileURLToPath(new URL('..', import.meta.url));
const cli = join(root, 'bin/rankfold.mjs');
const refPath = join(root, 'test/fixtures/golden-outputs.json');
const out = mkdtempSync(join(tmpdir(), 'rankfold-golden-'));

const VOLATILE = /ms$|Ms$|^timings$|^file$|^output$|^input$|^removed$|^profile$|^path$|elapsed|seconds/i;
function scrub(value) {
  if (Array.isArray(value)) return value.map(scrub);
  if (value && typeof value === 'object') {
    const kept = {};
    for (const [k, v] of Object.entries(value)) if (!VOLATILE.test(k)) kept[k] = scrub(v);
    return kept;
  }
  return value;
}
const sha = (buf) => createHash('sha256').update(buf).digest('hex');

function run(args) {
  return execFileSync(process.execPath, [cli, ...args], {
    cwd: root,
    encoding: 'utf8',
    maxBuffer: 64 << 20,
    stdio: ['ignore', 'pipe', 'pipe'],
  });
}

const samples = ['gel-scan.tif', 'colour-slide.png', 'film-plate-16bit.tif', 'line-sensor-banding.png'];
const jobs = [];
for (const s of samples) {
  const stem = s.replace(/\.[a-z]+$/, '');
  const src = join('samples', s);
  jobs.push([`${stem}.inspect`, ['inspect', src, '--json'], null]);
  const encodes = [
    ['budget', ['--budget', '3%']],
    ['rank', ['--rank', '12', '--tile', '64']],
    ['base', ['--layers', 'base', '--bpp', '0.5']],
    ['psnr', ['--min-psnr', '33']],
  ];
  for (const [tag, opts] of encodes) {
    const rkf = join(out, `${stem}.${tag}.rkf`);
    jobs.push([`${stem}.compress.${tag}`, ['compress', src, '-o', rkf, '--json', ...opts], rkf]);
    const png = join(out, `${stem}.${tag}.png`);
    jobs.push([`${stem}.expand.${tag}`, ['expand', rkf, '-o', png, '--json'], png]);
  }
  const cleaned = join(out, `${stem}.clean.png`);
  const removed = join(out, `${stem}.removed.png`);
  jobs.push([`${stem}.clean`, ['clean', src, '-o', cleaned, '--removed', removed, '--json'], cleaned]);
  jobs.push([`${stem}.clean.removed`, null, removed]);
}

const onlyAt = process.argv.indexOf('--only');
const only = onlyAt > 0 ? new RegExp(process.argv[onlyAt + 1] ?? '') : undefined;
const got = {};
try {
  for (const [name, args, file] of jobs) {
    if (only && !only.test(name)) continue;
    process.stderr.write(`${name}\n`);
    if (args) got[`${name}.json`] = sha(JSON.stringify(scrub(JSON.parse(run(args)))));
    if (file) got[`${name}.bytes`] = sha(readFileSync(file));
  }
} finally {
  rmSync(out, { recursive: true, force: true });
}

const ref = JSON.parse(readFileSync(refPath, 'utf8'));
if (process.argv.includes('--write')) {
  const kept = only ? Object.fromEntries(Object.entries(ref).filter(([k]) => !only.test(k))) : {};
  const all = { ...kept, ...got };
  const sorted = Object.fromEntries(
    Object.keys(ref)
      .concat(Object.keys(got))
      .filter((k, i, a) => a.indexOf(k) === i)
      .filter((k) => k in all)
      .map((k) => [k, all[k]]),
  );
  writeFileSync(refPath, `${JSON.stringify(sorted, null, 2)}\n`);
  process.stdout.write(`recorded ${Object.keys(got).length} outputs in ${refPath}\n`);
} else {
  const keys = only ? Object.keys(got) : Object.keys({ ...ref, ...got });
  const differ = keys.filter((k) => ref[k] !== got[k]);
  for (const k of differ) process.stdout.write(`differs: ${k}\n`);
  process.stdout.write(`${Object.keys(got).length - differ.length} identical, ${differ.length} differ\n`);
  process.exit(differ.length ? 1 : 0);
}
