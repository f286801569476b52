// `rankfold batch` end to end, through the built CLI (dist/cli.js + dist/workers/batch.js; `npm test` builds
// first), on real files in temp folders. Properties checked: inputs untouched, one row per input, clear
// per-file errors, atomic outputs (no temp files left), resume after SIGKILL gives the same outputs,
// 1 job and 2 jobs give byte-identical files, shards + merge cover every file once.
import { type ChildProcess, spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BatchRow } from '../../src-main/contract';
import { spawnWithModeBits } from '../helpers/permissions';
import {
  BUDGET,
  built,
  cli,
  filesUnder,
  goodSet,
  hashTree,
  jsonLines,
  manifestRows,
  rkfOnly,
  runBatchCli,
} from './cli-harness';
import { floatTiff, put, writePage, writePage16 } from './images';

let root: string;
const run = (args: string[]) => runBatchCli(args);

const near = (x: unknown, y: unknown, tol: number) =>
  x !== undefined && (String(x) === String(y) || Math.abs(Number(x) - Number(y)) <= tol);

beforeAll(async () => {
  root = await mkdtemp(join(tmpdir(), 'rankfold-batch-e2e-'));
});
afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe.skipIf(!built)('rankfold batch (built CLI)', () => {
  let mixedIn: string;
  const deepDir = [
    'Harrowgate County Survey Office',
    'Ledgers 1901–1910',
    'Band Ω',
    'Fenwick Lab',
    'gels',
    'Gel №12 (ß)',
  ];

  beforeAll(async () => {
    mixedIn = join(root, 'mixed-in');
    await goodSet(mixedIn, 4);
    await writePage(join(mixedIn, 'colour', 'map.tif'), 80, 60, 9, 'tiff', 3);
    await writePage(join(mixedIn, 'colour', 'overlay-rgba.png'), 48, 40, 13, 'png', 4);
    await writePage16(join(mixedIn, 'plates', 'plate-16bit.png'), 64, 48, 5);
    await writePage(join(mixedIn, ...deepDir, 'lane 3 — 東.png'), 64, 48, 11);
    // Two inputs that would share an output name.
    await writePage(join(mixedIn, 'dup', 'sheet.png'), 64, 48, 21);
    await writePage(join(mixedIn, 'dup', 'sheet.tif'), 64, 48, 22, 'tiff');
    // Bad files.
    await put(join(mixedIn, 'bad', 'empty.png'), '');
    const png = await sharp(Buffer.alloc(96 * 64, 128), { raw: { width: 96, height: 64, channels: 1 } })
      .png()
      .toBuffer();
    await put(join(mixedIn, 'bad', 'truncated.png'), png.subarray(0, Math.floor(png.length / 2)));
    await put(
      join(mixedIn, 'bad', 'corrupt.tif'),
      Buffer.from('II*\0garbage that is not a TIFF directory at all'),
    );
    await put(join(mixedIn, 'bad', 'notes.txt'), 'Box 12 inventory, checked by the night shift.\n');
    await put(join(mixedIn, 'bad', 'float32.tif'), floatTiff(16, 8));
    await writePage(join(mixedIn, 'bad', 'oversize.png'), 200, 150, 3);
  });

  const PIXEL_LIMIT = ['--pixel-limit', '20000']; // 200×150 = 30000 is over; every good file is ≤ 96×64 = 6144

  it('compresses good files, fails each bad file with a clear message, goes on, and leaves the inputs alone', () => {
    const before = hashTree(mixedIn);
    const out = join(root, 'mixed-out');
    const r = run([mixedIn, '-o', out, ...BUDGET, ...PIXEL_LIMIT, '--jobs', '2', '--json', '--expand-check']);
    expect(r.code, r.stderr).toBe(2);
    expect(hashTree(mixedIn)).toEqual(before); // inputs byte-identical, and nothing added inside IN_DIR
    const events = jsonLines(r.stdout);
    expect(events[0].event).toBe('start');
    expect(events.at(-1)!.event).toBe('end');
    const files = events.filter((e) => e.event === 'file') as unknown as BatchRow[];
    expect(files.map((f) => f.path).sort()).toEqual(Object.keys(before).sort());
    const byPath = new Map(files.map((f) => [f.path, f]));
    const msg = (p: string) => byPath.get(p)!.error?.message ?? '';
    expect(msg('bad/empty.png')).toContain('is empty (0 bytes)');
    // Worded from the file's signature, so the same with 1 job or 2 (libvips' error text is process-wide).
    expect(msg('bad/truncated.png')).toContain('starts as a PNG file but the rest is truncated or corrupt');
    expect(msg('bad/corrupt.tif')).toContain('starts as a TIFF file but the rest is truncated or corrupt');
    // Not a scan at all: listed as skipped with the reason, not failed (issue #14).
    expect(byPath.get('bad/notes.txt')!.status).toBe('skipped');
    expect(byPath.get('bad/notes.txt')!.note).toMatch(/not an image Rankfold can read/);
    expect(msg('bad/float32.tif')).toContain('unsupported sample format "float"');
    expect(msg('bad/oversize.png')).toContain('over the pixel limit of 20000');
    for (const p of Object.keys(before)) {
      const row = byPath.get(p)!;
      if (p === 'bad/notes.txt') continue;
      if (p.startsWith('bad/')) {
        expect(row.status, p).toBe('failed');
        expect(row.error!.message, p).toContain(p.split('/').pop()!); // the message names the file
      } else {
        expect(row.status, `${p}: ${row.error?.message}`).toBe('ok');
        expect(row.check?.ok, p).toBe(true);
        // Re-measured PSNR and SSIM agree (an exact file has PSNR "Infinity" in the JSON on both sides).
        expect(near(row.check!.psnr, row.psnr, 0.01), p).toBe(true);
        expect(near(row.check!.ssim, row.ssim, 1e-4), p).toBe(true);
        expect(row.sourceSha256).toMatch(/^[0-9a-f]{64}$/);
        expect(row.fileSha256).toBe(before[p]);
      }
    }
    // Outputs: one per good input, folders mirrored, collisions disambiguated, nothing partial.
    const outs = filesUnder(out).filter(rkfOnly);
    expect(outs).toContain(`${deepDir.join('/')}/lane 3 — 東.rkf`);
    expect(outs).toContain('dup/sheet.png.rkf');
    expect(outs).toContain('dup/sheet.tif.rkf');
    expect(outs).toContain('plates/plate-16bit.rkf');
    expect(outs).toHaveLength(Object.keys(before).filter((p) => !p.startsWith('bad/')).length);
    expect(filesUnder(out).filter((f) => f.split('/').pop()!.startsWith('.rankfold-tmp-'))).toEqual([]);
    // Manifest: one row per input, sorted; CSV with the same rows; report lists the failures.
    const rows = manifestRows(join(out, 'rankfold-manifest.jsonl'));
    expect(rows.map((x) => x.path)).toEqual(Object.keys(before).sort());
    const csv = readFileSync(join(out, 'rankfold-manifest.csv'), 'utf8').trim().split('\r\n');
    expect(csv).toHaveLength(rows.length + 1);
    const html = readFileSync(join(out, 'rankfold-manifest.html'), 'utf8');
    expect(html).toContain('Failures (5)');
    expect(html).toContain('over the pixel limit of 20000');
    expect(html).toMatch(/<img src="data:image\/png;base64,[A-Za-z0-9+/=]{100,}"/);
    // The ten worst files × (original + reconstruction), all inline.
    expect((html.match(/<img src="data:image\/png;base64,[A-Za-z0-9+/=]{100,}"/g) ?? []).length).toBe(20);
    expect(html).not.toMatch(/(?:src|href)="https?:/);
    expect(r.stderr).toContain('Failed files:');
    expect(r.stderr).toContain('bad/notes.txt');
  });

  it('gives byte-identical .rkf files and the same manifest with 1 job and with 2 jobs', () => {
    const o1 = join(root, 'jobs1');
    const o2 = join(root, 'jobs2');
    expect(run([mixedIn, '-o', o1, ...BUDGET, ...PIXEL_LIMIT, '--jobs', '1']).code).toBe(2);
    expect(run([mixedIn, '-o', o2, ...BUDGET, ...PIXEL_LIMIT, '--jobs', '2']).code).toBe(2);
    const h1 = hashTree(o1, rkfOnly);
    expect(Object.keys(h1).length).toBeGreaterThan(5);
    expect(hashTree(o2, rkfOnly)).toEqual(h1);
    const strip = (rows: BatchRow[]) => rows.map(({ at, timeMs, outputAbs, ...rest }) => rest);
    expect(strip(manifestRows(join(o2, 'rankfold-manifest.jsonl')))).toEqual(
      strip(manifestRows(join(o1, 'rankfold-manifest.jsonl'))),
    );
  });

  it('refuses an output folder inside the input folder (exit 1) and writes nothing', () => {
    const before = hashTree(mixedIn);
    const r = run([mixedIn, '-o', join(mixedIn, 'box-0', 'out'), ...BUDGET]);
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('is inside the input folder');
    expect(run([mixedIn, '-o', mixedIn, ...BUDGET]).code).toBe(1);
    const rep = run([mixedIn, '-o', join(root, 'elsewhere'), ...BUDGET, '--report', join(mixedIn, 'r.html')]);
    expect(rep.code).toBe(1);
    expect(rep.stderr).toContain('would be written inside the input folder');
    expect(hashTree(mixedIn)).toEqual(before);
    expect(run([mixedIn, ...BUDGET]).stderr).toContain('give an output folder with -o');
    expect(run([mixedIn, '-o', join(root, 'x'), '--rank', '5', '--bpp', '1']).stderr).toContain(
      'give only one budget',
    );
  });

  it('a SIGKILL in the middle, then --resume, ends with the same outputs as an uninterrupted run', async () => {
    const N = 10;
    const inDir = join(root, 'kill-in');
    await goodSet(inDir, N, 128, 96);
    const ref = join(root, 'kill-ref');
    expect(run([inDir, '-o', ref, ...BUDGET, '--jobs', '1']).code).toBe(0);
    const refHashes = hashTree(ref, rkfOnly);
    expect(Object.keys(refHashes)).toHaveLength(N);

    const out = join(root, 'kill-out');
    const child: ChildProcess = spawn(
      process.execPath,
      [cli, 'batch', inDir, '-o', out, ...BUDGET, '--jobs', '1', '--json'],
      {
        stdio: ['ignore', 'pipe', 'pipe'],
      },
    );
    let seen = 0;
    const exit = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) =>
      child.on('exit', (code, signal) => resolve({ code, signal })),
    );
    child.stdout!.on('data', (chunk: Buffer) => {
      seen += (chunk.toString().match(/"event":"file"/g) ?? []).length;
      if (seen >= 2) child.kill('SIGKILL');
    });
    const ended = await exit;
    expect(ended.signal, 'the batch finished before the kill; make the folder bigger').toBe('SIGKILL');
    // `rankfold batch` runs its jobs in a relaunched process (src-main/node/cli/relaunch.ts): killing the
    // command must kill that too, or it would go on writing beside the resumed run.
    if (existsSync('/proc')) {
      const alive = () =>
        readdirSync('/proc')
          .filter((d) => /^\d+$/.test(d))
          .filter((d) => {
            try {
              return readFileSync(`/proc/${d}/cmdline`, 'utf8').includes(out);
            } catch {
              return false;
            }
          });
      for (let i = 0; i < 50 && alive().length; i++) await new Promise((r) => setTimeout(r, 20));
      expect(alive(), 'a batch process outlived the SIGKILL of the command').toEqual([]);
    }
    const partial = hashTree(out, rkfOnly);
    expect(Object.keys(partial).length).toBeGreaterThanOrEqual(2);
    expect(Object.keys(partial).length).toBeLessThan(N);
    // Whatever exists after the kill is complete: identical to the uninterrupted run's file.
    for (const [f, h] of Object.entries(partial)) expect(h, f).toBe(refHashes[f]);
    // A stale temp file of ours (swept) and one of another shard's outputs (left alone).
    await mkdir(join(out, 'box-1'), { recursive: true });
    await mkdir(join(out, 'box-2'), { recursive: true });
    await writeFile(join(out, 'box-1', '.rankfold-tmp-0123456789ab-page-07.rkf'), 'partial');
    await writeFile(join(out, 'box-2', '.rankfold-tmp-0123456789ab-not-ours.rkf'), 'other shard');

    const r = run([inDir, '-o', out, ...BUDGET, '--jobs', '2', '--resume', '--json']);
    expect(r.code, r.stderr).toBe(0);
    expect(hashTree(out, rkfOnly)).toEqual(refHashes);
    const events = jsonLines(r.stdout).filter((e) => e.event === 'file');
    expect(events).toHaveLength(N);
    expect(events.filter((e) => e.status === 'kept').length).toBeGreaterThanOrEqual(2);
    expect(existsSync(join(out, 'box-1', '.rankfold-tmp-0123456789ab-page-07.rkf'))).toBe(false);
    expect(existsSync(join(out, 'box-2', '.rankfold-tmp-0123456789ab-not-ours.rkf'))).toBe(true);
    const rows = manifestRows(join(out, 'rankfold-manifest.jsonl'));
    expect(rows.map((x) => x.path)).toEqual(filesUnder(inDir));
    expect(rows.every((x) => x.status === 'ok' || x.status === 'kept')).toBe(true);

    // With the manifest lost, the .rkf headers' source SHA-256 decides: everything is kept, nothing rewritten.
    await rm(join(out, 'rankfold-manifest.jsonl'));
    const byHeader = run([inDir, '-o', out, ...BUDGET, '--resume', '--json']);
    expect(byHeader.code, byHeader.stderr).toBe(0);
    const hdrEvents = jsonLines(byHeader.stdout).filter((e) => e.event === 'file');
    expect(hdrEvents.map((e) => e.status)).toEqual(new Array(N).fill('kept'));
    expect(String(hdrEvents[0].note)).toContain('.rkf header records the same source SHA-256');
    expect(hashTree(out, rkfOnly)).toEqual(refHashes);
    // A changed source is compressed again, not kept.
    await writePage(join(inDir, 'box-0', 'page-00.png'), 160, 120, 99);
    const again = jsonLines(run([inDir, '-o', out, ...BUDGET, '--resume', '--json']).stdout).filter(
      (e) => e.event === 'file',
    );
    expect(again.find((e) => e.path === 'box-0/page-00.png')!.status).toBe('ok');
    expect(again.filter((e) => e.status === 'kept')).toHaveLength(N - 1);
    // Other settings: every file is made again.
    const other = jsonLines(
      run([inDir, '-o', out, '--rank', '3', '--tile', '32', '--resume', '--json']).stdout,
    );
    expect(other.filter((e) => e.event === 'file' && e.status === 'ok')).toHaveLength(N);
    // Without --resume or --force an existing output is a per-file error, never overwritten.
    const noResume = run([inDir, '-o', out, ...BUDGET, '--json']);
    expect(noResume.code).toBe(2);
    expect(noResume.stdout).toContain('already exists');
  });

  it('a file over --timeout is stopped and fails alone, with no temp file left', () => {
    const out = join(root, 'timeout-out');
    const r = run([
      join(mixedIn, 'box-0'),
      '-o',
      out,
      ...BUDGET,
      '--timeout',
      '0.05',
      '--jobs',
      '1',
      '--json',
    ]);
    const files = jsonLines(r.stdout).filter((e) => e.event === 'file') as unknown as BatchRow[];
    const timedOut = files.filter((f) => f.error?.name === 'TimeoutError');
    expect(timedOut.length).toBeGreaterThan(0);
    expect(r.code).toBe(2);
    for (const f of timedOut)
      expect(f.error!.message).toBe(
        `${f.path}: took longer than the per-file limit of 0.1 s and was stopped; raise it with --timeout`,
      );
    expect(filesUnder(out).filter((f) => f.split('/').pop()!.startsWith('.rankfold-tmp-'))).toEqual([]);
  });

  it('SIGINT stops cleanly: finished rows are kept, exit 2, and the message says to resume', async () => {
    const inDir = join(root, 'sigint-in');
    await goodSet(inDir, 10, 160, 120);
    const out = join(root, 'sigint-out');
    const child = spawn(
      process.execPath,
      [cli, 'batch', inDir, '-o', out, ...BUDGET, '--jobs', '1', '--json'],
      { stdio: ['ignore', 'pipe', 'pipe'] },
    );
    let stderr = '';
    let done = 0;
    let sent = false;
    child.stderr!.on('data', (c: Buffer) => {
      stderr += c.toString();
    });
    child.stdout!.on('data', (c: Buffer) => {
      done += (c.toString().match(/"event":"file"/g) ?? []).length;
      if (done >= 2 && !sent) {
        sent = true; // a second SIGINT is a hard stop, by design
        child.kill('SIGINT');
      }
    });
    const code = await new Promise<number | null>((resolve) => child.on('exit', (c) => resolve(c)));
    expect(code).toBe(2);
    expect(stderr).toMatch(/interrupted with \d+ files? not finished; run the same command with --resume/);
    const rows = manifestRows(join(out, 'rankfold-manifest.jsonl'));
    expect(rows.length).toBeGreaterThanOrEqual(2);
    expect(rows.length).toBeLessThan(filesUnder(inDir).length);
    expect(rows.every((x) => x.status === 'ok')).toBe(true);
    expect(filesUnder(out).filter((f) => f.split('/').pop()!.startsWith('.rankfold-tmp-'))).toEqual([]);
  });

  it('shards cover every file once and --merge joins their manifests', () => {
    const out = join(root, 'shards-out');
    for (let s = 0; s < 3; s++) {
      const r = run([mixedIn, '-o', out, ...BUDGET, ...PIXEL_LIMIT, '--jobs', '1', '--shard', `${s}/3`]);
      expect([0, 2]).toContain(r.code);
    }
    const shardRows = [0, 1, 2].flatMap((s) => manifestRows(join(out, `rankfold-manifest-${s}of3.jsonl`)));
    const inputs = filesUnder(mixedIn);
    expect(shardRows.map((x) => x.path).sort()).toEqual(inputs);
    const m = run([
      '--merge',
      ...[0, 1, 2].map((s) => join(out, `rankfold-manifest-${s}of3.jsonl`)),
      '-o',
      join(root, 'merged'),
    ]);
    expect(m.code).toBe(2); // some inputs are bad files
    const merged = manifestRows(join(root, 'merged', 'rankfold-manifest.jsonl'));
    expect(merged.map((x) => x.path)).toEqual(inputs);
    expect(existsSync(join(root, 'merged', 'rankfold-manifest.html'))).toBe(true);
    // Sharded outputs equal the unsharded run's.
    expect(hashTree(out, rkfOnly)).toEqual(hashTree(join(root, 'jobs1'), rkfOnly));
  });

  it('a second run into the same output folder is refused while the first runs (exit 1, names the folder and the other run); shards run side by side', async () => {
    const inDir = join(root, 'lock-in');
    await goodSet(inDir, 6, 128, 96);
    const out = join(root, 'lock-out');
    const first = spawn(
      process.execPath,
      [cli, 'batch', inDir, '-o', out, ...BUDGET, '--jobs', '1', '--json'],
      {
        stdio: ['ignore', 'pipe', 'pipe'],
      },
    );
    const firstEnd = new Promise<number | null>((resolve) => first.on('exit', (code) => resolve(code)));
    // The lock is taken before the start event; wait for that event, not for a time.
    await new Promise<void>((resolve) => {
      let text = '';
      first.stdout!.on('data', (d: Buffer) => {
        text += d;
        if (text.includes('"event":"start"')) resolve();
      });
    });
    // Hold the first run still (SIGSTOP to the process named in the lock), so the second surely meets it.
    const holder = JSON.parse(readFileSync(join(out, 'rankfold-manifest.jsonl.lock'), 'utf8')).pid as number;
    process.kill(holder, 'SIGSTOP');
    let second: ReturnType<typeof run>;
    try {
      second = run([inDir, '-o', out, ...BUDGET, '--jobs', '1', '--resume']);
    } finally {
      process.kill(holder, 'SIGCONT');
    }
    expect(await firstEnd).toBe(0);
    expect(second.code).toBe(1);
    expect(second.stderr).toMatch(
      new RegExp(
        `output folder ${out.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')} is in use by another rankfold batch \\(pid \\d+ on host .+, started \\d{4}-\\d\\d-\\d\\dT.+\\), which holds .*rankfold-manifest\\.jsonl\\.lock; wait for it to end, or choose another -o`,
      ),
    );
    // Shards have their own manifests (docs/scale.md), so two at once may share a folder.
    const shared = join(root, 'lock-shards');
    const shardRun = (i: number) =>
      new Promise<number | null>((resolve) =>
        spawn(
          process.execPath,
          [cli, 'batch', inDir, '-o', shared, ...BUDGET, '--jobs', '1', '--shard', `${i}/2`],
          {
            stdio: 'ignore',
          },
        ).on('exit', (code) => resolve(code)),
      );
    expect(await Promise.all([shardRun(0), shardRun(1)])).toEqual([0, 0]);
    expect(filesUnder(shared).filter(rkfOnly)).toHaveLength(6);
    // The first run's manifest agrees with the folder: one row per input, each output there.
    const rows = manifestRows(join(out, 'rankfold-manifest.jsonl'));
    expect(rows.map((r) => r.status)).toEqual(Array(6).fill('ok'));
    for (const r of rows) expect(existsSync(r.outputAbs)).toBe(true);
    expect(filesUnder(out).filter((f) => f.endsWith('.lock'))).toEqual([]);
  });

  it('a lock left by a dead run on this host is taken over, with a note, and the run succeeds', async () => {
    const inDir = join(root, 'stale-in');
    await goodSet(inDir, 2);
    const out = join(root, 'stale-out');
    await mkdir(out, { recursive: true });
    const dead = spawnSync(process.execPath, ['-e', '0']).pid; // has exited, so its pid names no process
    const { hostname } = await import('node:os');
    await writeFile(
      join(out, 'rankfold-manifest.jsonl.lock'),
      JSON.stringify({ pid: dead, host: hostname(), started: '2026-01-02T03:04:05.000Z', nonce: 'old' }),
    );
    const r = run([inDir, '-o', out, ...BUDGET]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain(
      `note: took over the lock ${join(out, 'rankfold-manifest.jsonl.lock')} of a batch that is no longer running (pid ${dead} on host ${hostname()}, started 2026-01-02T03:04:05.000Z)`,
    );
    expect(existsSync(join(out, 'rankfold-manifest.jsonl.lock'))).toBe(false);
  });

  it('an output folder that cannot be written fails every file with a clear error (path under a file)', async () => {
    const blocker = join(root, 'blocker.txt');
    await writeFile(blocker, 'a file, not a folder');
    const r = run([join(mixedIn, 'box-0'), '-o', join(blocker, 'out'), ...BUDGET, '--json']);
    expect(r.code).toBe(2);
    const files = jsonLines(r.stdout).filter((e) => e.event === 'file') as unknown as BatchRow[];
    expect(files.length).toBeGreaterThan(0);
    for (const f of files) {
      expect(f.status).toBe('failed');
      expect(f.error!.message).toContain('a part of the output path is a file, not a folder');
    }
    expect(r.stderr).toContain('cannot be written');
  });

  it('a folder without write permission fails every file (as root too: run without CAP_DAC_OVERRIDE)', async () => {
    const out = join(root, 'readonly-out');
    await mkdir(out);
    spawnSync('chmod', ['0555', out]);
    const r = spawnWithModeBits(
      process.execPath,
      [cli, 'batch', join(mixedIn, 'box-0'), '-o', out, ...BUDGET, '--json'],
      {
        env: { ...process.env, FORCE_COLOR: '0' },
      },
    );
    spawnSync('chmod', ['0755', out]);
    expect(r.status).toBe(2);
    for (const f of jsonLines(r.stdout).filter((e) => e.event === 'file') as unknown as BatchRow[])
      expect(f.error!.message).toContain('permission denied when writing');
  });

  describe('on small file systems (tmpfs; skipped where mounting is not allowed)', () => {
    const mountRoot = mkdtempSync(join(tmpdir(), 'rankfold-batch-mnt-'));
    const mnt = (name: string, opts: string) => {
      const dir = join(mountRoot, name);
      mkdirSync(dir);
      const r = spawnSync('mount', ['-t', 'tmpfs', '-o', opts, 'tmpfs', dir], { encoding: 'utf8' });
      return r.status === 0 ? dir : undefined;
    };
    const ro = mnt('ro-mnt', 'ro,size=1m');
    const tiny = mnt('tiny-mnt', 'size=12k');
    afterAll(() => {
      for (const d of [ro, tiny]) if (d) spawnSync('umount', [d]);
      rmSync(mountRoot, { recursive: true, force: true });
    });

    it.skipIf(!ro)('a read-only file system fails every file and says so', () => {
      const r = run([join(mixedIn, 'box-0'), '-o', join(ro!, 'out'), ...BUDGET, '--json']);
      expect(r.code).toBe(2);
      const files = jsonLines(r.stdout).filter((e) => e.event === 'file') as unknown as BatchRow[];
      expect(files.length).toBeGreaterThan(0);
      for (const f of files) expect(f.error!.message).toContain('read-only');
    });

    it.skipIf(!tiny)(
      'a full disk fails the files that do not fit, leaves no partial output, and goes on',
      async () => {
        const inDir = join(root, 'full-in');
        await goodSet(inDir, 12, 160, 120);
        const out = join(tiny!, 'out');
        const r = run([inDir, '-o', out, '--rank', '16', '--tile', '32', '--jobs', '2', '--json']);
        expect(r.code).toBe(2);
        const files = jsonLines(r.stdout).filter((e) => e.event === 'file') as unknown as BatchRow[];
        expect(files).toHaveLength(12);
        const full = files.filter((f) => f.status === 'failed');
        expect(full.length).toBeGreaterThan(0);
        for (const f of full) expect(f.error!.message).toMatch(/disk is full|no space/);
        expect(filesUnder(out).filter((f) => f.split('/').pop()!.startsWith('.rankfold-tmp-'))).toEqual([]);
        for (const f of filesUnder(out).filter(rkfOnly))
          expect(statSync(join(out, f)).size).toBeGreaterThan(0);
      },
    );
  });
});
