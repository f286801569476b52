#!/usr/bin/env node
// CI step "scale": run the GNU parallel example of docs/scale.md for real, then its merge, and check the
// merged manifest. The command lines are read from the doc (not copied), so the doc and this run cannot
// drift; the only substitutions are the ones a reader makes: the two /archive paths become temporary
// folders, and nodes.txt lists only ":" (GNU parallel's name for the local machine, no ssh).
// The example runs twice: as written (its own shard count) and with the count rewritten to 3.
// Needs GNU parallel (Debian `parallel`) and a built CLI (`npm run build`). Exits 1 with a message that
// starts with "ci-scale:" on any failure.
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import {
  chmodSync,
  copyFileSync,
  existsSync,
  mkdirSync,
  mkdtempSync,
  readdirSync,
  readFileSync,
  rmSync,
  writeFileSync,
} from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const cli = join(root, 'bin', 'rankfold.mjs');
const t0 = Date.now();
let work = ''; // the temporary folder, once made

function fail(msg) {
  console.error(`ci-scale: FAILED: ${msg}${work ? ` (files kept in ${work})` : ''}`);
  process.exit(1);
}
function sh(cmd, cwd, env) {
  const r = spawnSync('bash', ['-c', cmd], { cwd, env, encoding: 'utf8' });
  if (r.error) fail(`could not run bash: ${r.error.message}`);
  return r;
}

if (spawnSync('parallel', ['--version'], { encoding: 'utf8' }).status !== 0)
  fail('GNU parallel is not installed (Debian: apt-get install parallel)');
if (!existsSync(join(root, 'dist', 'cli.js'))) fail('dist/cli.js is missing: run `npm run build` first');

// --- the example, from the doc --------------------------------------------------------------------------
const doc = readFileSync(join(root, 'docs', 'scale.md'), 'utf8');
const at = doc.indexOf('## GNU parallel');
if (at < 0) fail('docs/scale.md has no "## GNU parallel" section');
const block = /```sh\n([\s\S]*?)```/.exec(doc.slice(at))?.[1];
if (!block) fail('the "GNU parallel" section of docs/scale.md has no ```sh block');
const lines = block
  .replace(/\\\n\s*/g, '')
  .split('\n')
  .filter((l) => l.trim());
const runLine = lines.find((l) => l.startsWith('parallel '));
const mergeLine = lines.find((l) => l.startsWith('rankfold batch --merge '));
if (!runLine || !mergeLine || lines.length !== 2)
  fail(
    `expected one "parallel …" line and one "rankfold batch --merge …" line in the doc's block, got:\n${block}`,
  );
const docShards = Number(/--shard \{\}\/(\d+)/.exec(runLine)?.[1]);
const list = /:::((?: \d+)+)\s*$/.exec(runLine)?.[1].trim().split(' ').map(Number);
if (!docShards || !list || list.join(' ') !== [...Array(docShards).keys()].join(' '))
  fail(`the doc's parallel line does not run shards 0…N−1 as "--shard {}/N … ::: 0 1 … N−1": ${runLine}`);

/** The doc's two lines with N shards: the ::: list, the {}/N and the merge's manifest list rewritten. */
function withShards(n) {
  if (n === docShards) return [runLine, mergeLine];
  const run = runLine
    .replace(`--shard {}/${docShards}`, `--shard {}/${n}`)
    .replace(/:::(?: \d+)+\s*$/, `::: ${[...Array(n).keys()].join(' ')}`);
  const m = /^(rankfold batch --merge )((?:\S+-\d+of\d+\.jsonl )+)(.*)$/.exec(mergeLine);
  if (!m) fail(`the doc's merge line does not list the shard manifests: ${mergeLine}`);
  const dir = dirname(m[2].split(' ')[0]);
  const manifests = [...Array(n).keys()].map((i) => `${dir}/rankfold-manifest-${i}of${n}.jsonl`);
  return [run, `${m[1]}${manifests.join(' ')} ${m[3]}`];
}

// --- a small folder of scans ----------------------------------------------------------------------------
work = mkdtempSync(join(tmpdir(), 'rankfold-ci-scale-'));
const scans = join(work, 'scans');
const images = join(root, 'test', 'fixtures', 'images');
// A fixed list, not whatever the fixtures folder holds: a new test image there must not change the shards.
const picked = ['camera.png', 'chessboard_GRAY_U16.tif', 'moon.png', 'page.png', 'phantom.png', 'text.png'];
// Three copies in a subfolder make 9 files. 'drawer-2' is chosen so that no shard is empty with 3 or 4
// shards (4+3+1+1 and 4+2+3 by the rule below); an empty shard makes the merge warn, by design.
mkdirSync(join(scans, 'drawer-2'), { recursive: true });
for (const f of picked) copyFileSync(join(images, f), join(scans, f));
for (const f of ['phantom.png', 'text.png', 'page.png'])
  copyFileSync(join(images, f), join(scans, 'drawer-2', f));
const inputs = [];
(function walk(d) {
  for (const e of readdirSync(d, { withFileTypes: true }))
    e.isDirectory() ? walk(join(d, e.name)) : inputs.push(relative(scans, join(d, e.name)));
})(scans);
inputs.sort();
if (inputs.length !== 9) fail(`expected 9 test scans, made ${inputs.length}`);

// `rankfold` on PATH, as the doc assumes; nodes.txt = the local machine.
const bin = join(work, 'bin');
mkdirSync(bin);
writeFileSync(join(bin, 'rankfold'), `#!/bin/sh\nexec "${process.execPath}" "${cli}" "$@"\n`);
chmodSync(join(bin, 'rankfold'), 0o755);
writeFileSync(join(work, 'nodes.txt'), ':\n');
const env = { ...process.env, PATH: `${bin}:${process.env.PATH}` };

// --- run and check --------------------------------------------------------------------------------------
/** The documented rule: the first 48 bits of SHA-256 of the '/'-separated NFC relative path, mod N. */
const shardOf = (path, n) =>
  Number(
    BigInt(`0x${createHash('sha256').update(path.normalize('NFC')).digest('hex').slice(0, 12)}`) % BigInt(n),
  );
const sha = (f) => createHash('sha256').update(readFileSync(f)).digest('hex');
const readRows = (f) =>
  readFileSync(f, 'utf8')
    .split('\n')
    .filter(Boolean)
    .map((l) => JSON.parse(l));

async function runWith(n) {
  const out = join(work, `rkf-${n}`);
  const [run, merge] = withShards(n).map((l) =>
    l.replaceAll('/archive/scans', scans).replaceAll('/archive/rkf', out),
  );
  if (run.includes('/archive/') || merge.includes('/archive/'))
    fail(`a path other than /archive/scans and /archive/rkf in the doc's example: ${run}`);
  console.log(`ci-scale: ${n} shards: ${run}`);
  let t = Date.now();
  const r1 = sh(run, work, env);
  if (r1.status !== 0) fail(`the parallel run exited ${r1.status}\n${r1.stdout}${r1.stderr}`);
  console.log(`ci-scale: … ${((Date.now() - t) / 1000).toFixed(1)} s; ${merge}`);
  t = Date.now();
  const r2 = sh(merge, work, env);
  if (r2.status !== 0) fail(`the merge exited ${r2.status} (2 = it warned)\n${r2.stdout}${r2.stderr}`);

  // Shards partition the inputs: every shard manifest has rows, no path in two shards, together all.
  const seen = new Map();
  for (let i = 0; i < n; i++) {
    const f = join(out, `rankfold-manifest-${i}of${n}.jsonl`);
    if (!existsSync(f)) fail(`shard ${i}/${n} wrote no manifest (${f})`);
    const rows = readRows(f);
    if (!rows.length) fail(`shard ${i}/${n} has no rows`);
    for (const row of rows) {
      if (seen.has(row.path)) fail(`${row.path} is in shard ${seen.get(row.path)} and shard ${i} of ${n}`);
      if (shardOf(row.path, n) !== i)
        fail(`${row.path} is in shard ${i}/${n}; docs/scale.md's rule puts it in ${shardOf(row.path, n)}`);
      seen.set(row.path, i);
    }
  }
  const sizes = [...Array(n).keys()].map((i) => [...seen.values()].filter((s) => s === i).length);
  if ([...seen.keys()].sort().join('\n') !== inputs.join('\n'))
    fail(`the ${n} shards hold ${[...seen.keys()].sort().join(', ')}; the inputs are ${inputs.join(', ')}`);

  // The merged manifest: every input exactly once, status ok, the right file, and the output expands.
  const merged = readRows(join(out, 'rankfold-manifest.jsonl'));
  const paths = merged.map((r) => r.path).sort();
  if (paths.join('\n') !== inputs.join('\n'))
    fail(`the merged manifest lists ${paths.join(', ')}; the inputs are ${inputs.join(', ')}`);
  for (const f of ['rankfold-manifest.csv', 'rankfold-manifest.html'])
    if (!existsSync(join(out, f))) fail(`the merge wrote no ${f}`);
  console.log(`ci-scale: … ${((Date.now() - t) / 1000).toFixed(1)} s; checking and expanding`);
  const expanded = join(work, `expanded-${n}`);
  mkdirSync(expanded);
  for (const [k, row] of merged.entries()) {
    if (row.status !== 'ok')
      fail(`${row.path}: status ${row.status} ${JSON.stringify(row.error ?? row.note)}`);
    if (row.shard?.index !== undefined && row.shard.index !== seen.get(row.path))
      fail(
        `${row.path}: merged row says shard ${row.shard.index}, its shard manifest is ${seen.get(row.path)}`,
      );
    if (row.fileSha256 !== sha(join(scans, row.path))) fail(`${row.path}: fileSha256 is not the input's`);
    const dest = join(expanded, `${k}.png`);
    const e = spawnSync(process.execPath, [cli, 'expand', join(out, row.output), '-o', dest], {
      encoding: 'utf8',
    });
    if (e.status !== 0) fail(`expand ${row.output} exited ${e.status}: ${e.stderr}`);
    const [a, b] = await Promise.all([sharp(dest).metadata(), sharp(join(scans, row.path)).metadata()]);
    if (a.width !== b.width || a.height !== b.height || a.width !== row.width || a.height !== row.height)
      fail(
        `${row.output} expands to ${a.width}×${a.height}; the source ${row.path} is ${b.width}×${b.height}`,
      );
  }
  console.log(
    `ci-scale: ${n} shards (${sizes.join('+')} files): ${merged.length} rows, all ok, each input once, ` +
      `all ${merged.length} outputs expand to their source's size`,
  );
}

for (const n of [...new Set([docShards, 3])]) await runWith(n);
rmSync(work, { recursive: true, force: true }); // kept only when a check failed
console.log(`ci-scale: passed in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
