/**
 * `rankfold batch --total` end to end (issue #13), on the built CLI: the total is met on disk, an impossible
 * total and an unreachable --min-psnr are refused before anything is written, a killed run resumes without a
 * new survey, and shards encoding one shared plan write the same files as one machine.
 */
import { type ChildProcess, spawn } from 'node:child_process';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  built,
  cli,
  filesUnder,
  hashTree,
  jsonLines,
  manifestRows,
  rkfOnly,
  runBatchCli,
} from './cli-harness';
import { writePage } from './images';

let root: string;
let inDir: string;
const TILE = ['--tile', '32', '--jobs', '2'];
const sumRkf = (dir: string) =>
  filesUnder(dir)
    .filter(rkfOnly)
    .reduce((s, f) => s + statSync(join(dir, f)).size, 0);

beforeAll(async () => {
  root = await mkdtemp(join(tmpdir(), 'rankfold-total-e2e-'));
  inDir = join(root, 'in');
  // A mixed little folder: ledger pages, a near-blank leaf, a noisy "photograph", and a text file.
  for (let i = 0; i < 4; i++) await writePage(join(inDir, `page-${i}.png`), 96, 64, i + 1);
  // (A perfectly constant leaf trips a codec error under byte budgets, reported separately; this one has grain.)
  const leaf = Buffer.alloc(96 * 64, 231);
  for (let i = 0; i < leaf.length; i += 7) leaf[i] = 229;
  await sharp(leaf, { raw: { width: 96, height: 64, channels: 1 } })
    .png()
    .toFile(join(inDir, 'leaf.png'));
  const noise = Buffer.alloc(96 * 64);
  for (let i = 0; i < noise.length; i++) noise[i] = (i * 2654435761) >>> 24;
  await sharp(noise, { raw: { width: 96, height: 64, channels: 1 } })
    .png()
    .toFile(join(inDir, 'photo.png'));
  await writeFile(join(inDir, 'notes.txt'), 'box list\n');
});
afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe.skipIf(!built)('rankfold batch --total (built CLI)', () => {
  it('meets the total on disk, names the floor, and lists the text file as skipped (exit 0)', () => {
    const out = join(root, 'out');
    const r = runBatchCli([inDir, '-o', out, '--total', '12kB', ...TILE]);
    expect(r.code, r.stderr).toBe(0);
    expect(sumRkf(out)).toBeLessThanOrEqual(12_000);
    expect(r.stderr).toMatch(/total: \d+ bytes .* written of 12000 .*within the total/);
    expect(r.stderr).toMatch(/floor: predicted \d+\.\d\d dB/);
    expect(r.stderr).toContain('1 skipped (not scans)');
    const rows = manifestRows(join(out, 'rankfold-manifest.jsonl'));
    const ok = rows.filter((x) => x.status === 'ok');
    expect(ok).toHaveLength(6);
    // Each file is within its own cap, and the caps sum to at most the total.
    for (const x of ok) expect(x.bytes!).toBeLessThanOrEqual(x.plan!.bytes);
    // The bytes left at the end went to the worst files (spare.ts): said, recorded, no temp file left.
    expect(r.stderr).toMatch(/spare: \d+ bytes were left under the total after the encode/);
    expect(ok.reduce((s, x) => s + x.bytes!, 0)).toBe(sumRkf(out));
    expect(filesUnder(out).filter((f) => f.includes('.rankfold-tmp-'))).toEqual([]);
    expect(rows.find((x) => x.path === 'notes.txt')!.status).toBe('skipped');
    expect(existsSync(join(out, 'rankfold-survey.json'))).toBe(true);
    // Each file's survey has a line as it ends (stderr is not a terminal here): 7 files, the text file unmeasured.
    expect(r.stderr).toMatch(/^\[\d\/7\] surveyed page-0\.png \d+\.\d\d–\d+\.\d\d dB$/m);
    expect(r.stderr).toMatch(/^\[\d\/7\] surveyed notes\.txt not measured$/m);
    expect(r.stderr.match(/^\[\d\/7\] surveyed /gm)).toHaveLength(7);
    // The text file is skipped with the reader's sentence, word for word as a run without --total lists it.
    const plain = join(root, 'plain');
    expect(runBatchCli([inDir, '-o', plain, '--budget', '10%', ...TILE]).code).toBe(0);
    const note = (m: string) => manifestRows(m).find((x) => x.path === 'notes.txt')!.note;
    expect(note(join(out, 'rankfold-manifest.jsonl'))).toBe(note(join(plain, 'rankfold-manifest.jsonl')));
    expect(note(join(out, 'rankfold-manifest.jsonl'))).not.toMatch(/left out of the plan/);
    // The dry run predicts the same first plan and writes nothing.
    const dry = join(root, 'dry');
    const d = runBatchCli([inDir, '-o', dry, '--total', '12kB', '--dry-run', ...TILE]);
    expect(d.code, d.stderr).toBe(0);
    expect(d.stderr).toMatch(/plan \(dry run, nothing written\): predicted floor/);
    expect(d.stderr).toMatch(/predicted PSNR: lowest/);
    expect(existsSync(dry)).toBe(false);
  });

  it('refuses an impossible total, or an unreachable --min-psnr, before anything is written', () => {
    const out = join(root, 'refused');
    const r = runBatchCli([inDir, '-o', out, '--total', '500', ...TILE]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(
      /the total 500 bytes \(500 bytes\) is below the smallest total these 6 files can take: \d+ bytes/,
    );
    const g = runBatchCli([inDir, '-o', out, '--total', '12kB', '--min-psnr', '95', ...TILE]);
    expect(g.code).toBe(1);
    expect(g.stderr).toMatch(/--min-psnr 95 needs about \d+ bytes/);
    expect(filesUnder(out)).toEqual([]);
  });

  it('a killed run resumes without a new survey and still meets the total', async () => {
    const out = join(root, 'killed');
    const args = [inDir, '-o', out, '--total', '12kB', '--tile', '32', '--jobs', '1', '--json'];
    const child: ChildProcess = spawn(process.execPath, [cli, 'batch', ...args], {
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    const exit = new Promise((resolve) => child.on('exit', resolve));
    let seen = 0;
    child.stdout!.on('data', (chunk: Buffer) => {
      seen += (chunk.toString().match(/"status":"ok"/g) ?? []).length;
      if (seen >= 2) child.kill('SIGKILL');
    });
    await exit;
    const survey = readFileSync(join(out, 'rankfold-survey.json'), 'utf8');
    expect(filesUnder(out).filter(rkfOnly).length).toBeLessThan(6);
    const r = runBatchCli([...args.slice(0, -1), '--resume']);
    expect(r.code, r.stderr).toBe(0);
    // Every file still to encode takes its curve from the survey manifest: none is measured again.
    const m = /survey: (\d+) files? measured in .* \((\d+) from /.exec(r.stderr);
    expect(m, r.stderr).not.toBeNull();
    expect(m![2]).toBe(m![1]);
    const entries = (text: string) => JSON.parse(text).files;
    const after = entries(readFileSync(join(out, 'rankfold-survey.json'), 'utf8'));
    for (const e of after) expect(entries(survey)).toContainEqual(e);
    expect(r.stderr).toMatch(/kept/);
    expect(sumRkf(out)).toBeLessThanOrEqual(12_000);
    expect(filesUnder(out).filter(rkfOnly)).toHaveLength(6);
  });

  it('shards encoding one shared plan write the same files as one machine, and the merge checks the total', () => {
    const out = join(root, 'shards');
    for (const s of ['0/2', '1/2']) {
      const r = runBatchCli([inDir, '-o', out, '--survey', '--shard', s, ...TILE]);
      expect(r.code, r.stderr).toBe(0);
    }
    const plan = join(root, 'plan.json');
    const p = runBatchCli([
      '--plan',
      join(out, 'rankfold-survey-0of2.json'),
      join(out, 'rankfold-survey-1of2.json'),
      '--total',
      '12kB',
      '-o',
      plan,
    ]);
    expect(p.code, p.stderr).toBe(0);
    expect(p.stderr).toMatch(/reserve: 120 bytes/);
    const planned = JSON.parse(readFileSync(plan, 'utf8'));
    expect(planned.planned).toBeLessThanOrEqual(12_000 - 120);
    expect(planned.excluded.map((x: { path: string }) => x.path)).toEqual(['notes.txt']);
    for (const s of ['0/2', '1/2']) {
      const r = runBatchCli([inDir, '-o', out, '--plan', plan, '--shard', s, ...TILE]);
      expect(r.code, r.stderr).toBe(0);
    }
    const one = join(root, 'one');
    expect(runBatchCli([inDir, '-o', one, '--plan', plan, ...TILE]).code).toBe(0);
    // The text file, left out of the plan, is skipped by its shard with the reader's own sentence.
    const skipped = manifestRows(join(one, 'rankfold-manifest.jsonl')).find((x) => x.path === 'notes.txt')!;
    expect(skipped.status).toBe('skipped');
    expect(skipped.note).toBe(planned.excluded[0].message);
    expect(hashTree(out, rkfOnly)).toEqual(hashTree(one, rkfOnly));
    expect(sumRkf(one)).toBeLessThanOrEqual(12_000 - 120);
    const m = runBatchCli([
      '--merge',
      join(out, 'rankfold-manifest-0of2.jsonl'),
      join(out, 'rankfold-manifest-1of2.jsonl'),
    ]);
    expect(m.stderr).toMatch(/total: \d+ bytes .* written of 12000 .*within the total/);
    expect(m.stderr).toMatch(/remaining: \d+ bytes/);
    // The plan held back 1 % (120 bytes); rounding of the caps can only add to what no file was given.
    const reserve = Number(/reserve: (\d+) bytes/.exec(m.stderr)?.[1]);
    expect(reserve).toBeGreaterThanOrEqual(120);
    expect(m.stderr).toMatch(/drift of shard 0\/2: \d+ bytes written against \d+ planned/);
    expect(m.stderr).toMatch(/drift of shard 1\/2: /);
    // The merged report proves the total too: its section, and predicted against achieved for the 6 files.
    const html = readFileSync(join(out, 'rankfold-manifest.html'), 'utf8');
    expect(html).toContain('<h2>Total for the folder</h2>');
    expect(html).toMatch(/total: \d+ bytes .* written of 12000 .*within the total/);
    expect(html.match(/<tr><td>page-\d\.png<\/td><td class="n">\d+<\/td>/g)).toHaveLength(4);
    expect(jsonLines('')).toEqual([]);
  });
});
