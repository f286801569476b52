#!/usr/bin/env node
// `npm run bench [name…]`: run each built benchmark (dist/bench/<name>.bench.js) in its own process,
// one after another so they do not compete for the two cores. Each writes docs/bench/<name>.md;
// this script then joins all sections into docs/benchmarks.md.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { cpus } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const distBench = join(root, 'dist', 'bench');
const sections = join(root, 'docs', 'bench');
mkdirSync(sections, { recursive: true });
const wanted = process.argv.slice(2);
const all = existsSync(distBench)
  ? readdirSync(distBench)
      .filter((f) => f.endsWith('.bench.js'))
      .sort()
  : [];
const run = wanted.length ? all.filter((f) => wanted.some((w) => f.startsWith(w))) : all;
for (const f of run) {
  console.error(`bench: ${f}`);
  const r = spawnSync(process.execPath, [join(distBench, f)], {
    stdio: 'inherit',
    cwd: root,
    env: { ...process.env, RANKFOLD_BENCH_OUT: sections },
  });
  if (r.status !== 0) console.error(`bench: ${f} failed with status ${r.status}`);
}
const parts = readdirSync(sections)
  .filter((f) => f.endsWith('.md'))
  .sort();
const head = [
  '# Benchmarks',
  '',
  'Written by `npm run bench`. Every figure is measured in the same run as its baseline and reported as a ratio',
  'where a ratio makes sense. Machine of the last full run: ' +
    `${cpus().length} × ${cpus()[0]?.model ?? 'unknown CPU'}, Node ${process.version}.`,
  'Sections are re-written only by the benchmark that owns them, so a partial run (`npm run bench engine`) keeps the others.',
  '',
];
writeFileSync(
  join(root, 'docs', 'benchmarks.md'),
  head.concat(parts.map((p) => readFileSync(join(sections, p), 'utf8').trim() + '\n')).join('\n'),
);
console.error('bench: wrote docs/benchmarks.md');
