// The batch journal keeps whole rows only (a failed or short append is cut back), and the per-manifest lock
// refuses a second run, lets shards share a folder, and takes over the lock of a dead run.
// Sources: POSIX write() ("may write fewer bytes than requested", ENOSPC), ftruncate(), fsync(), link()
// (EEXIST when the new name exists), kill() with signal 0 (ESRCH when no such process).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { mkdtemp, open, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { type BatchRow, UsageError } from '../../src-main/contract';
import { acquireBatchLock, type LockEnv, lockPathFor, processAlive } from '../../src-main/node/batch/lock';
import {
  type JournalHandle,
  type JournalOpen,
  ManifestJournal,
  manifestBase,
  readManifest,
} from '../../src-main/node/batch/manifest';
import { okRow } from './rows';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-journal-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

function row(path: string, pad = 0): BatchRow {
  return okRow(path, { note: pad ? 'x'.repeat(pad) : undefined });
}

/** Every line of the file is a whole row, and the file ends at a row's end. */
async function wholeRows(file: string): Promise<string[]> {
  const text = await readFile(file, 'utf8');
  if (text.length) expect(text.endsWith('\n')).toBe(true);
  return text
    .split('\n')
    .filter(Boolean)
    .map((l) => (JSON.parse(l) as BatchRow).path);
}

/**
 * A real file handle whose n-th write (1-based) misbehaves: 'enospc' writes half the bytes and then throws
 * ENOSPC (the bytes stay, as after a real partial write), 'short' writes half and reports it, 'sync' makes the
 * fsync after that write fail with EIO.
 */
function faulty(failAt: number, how: 'enospc' | 'short' | 'sync'): JournalOpen {
  return async (file, flags) => {
    const fh = await open(file, flags);
    let writes = 0;
    let failSync = false;
    const h: JournalHandle = {
      async write(data, offset, length, position) {
        writes++;
        if (writes === failAt && how !== 'sync') {
          const { bytesWritten } = await fh.write(data, offset, length >> 1, position);
          if (how === 'short') return { bytesWritten };
          throw Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' });
        }
        if (writes === failAt) failSync = true;
        return fh.write(data, offset, length, position);
      },
      async sync() {
        if (failSync) {
          failSync = false;
          throw Object.assign(new Error('EIO: i/o error, fsync'), { code: 'EIO' });
        }
        await fh.sync();
      },
      truncate: (n) => fh.truncate(n),
      readFile: () => fh.readFile(),
      close: () => fh.close(),
    };
    return h;
  };
}

describe('journal: rows are whole or absent', () => {
  it.each([
    ['a write that fails part-way with ENOSPC', 'enospc'],
    ['a short write', 'short'],
    ['an fsync that fails', 'sync'],
  ] as const)('%s is cut back to the last whole row, and later rows still go in', async (_label, how) => {
    const file = join(dir, `fault-${how}.jsonl`);
    const j = new ManifestJournal(file, faulty(3, how));
    await j.open(true);
    for (const p of ['a', 'b', 'c', 'd']) await j.append(row(p, 200));
    await j.close();
    expect(await wholeRows(file)).toEqual(['a', 'b', 'd']);
    expect(j.lost).toBe(1);
    expect(j.error?.message).toMatch(/ENOSPC|short write|EIO/);
  });

  it('reopening for --resume cuts a torn last line back to the last whole row, and appends after it', async () => {
    const file = join(dir, 'torn.jsonl');
    await writeFile(file, `${JSON.stringify(row('a'))}\n{"v":1,"path":"b","out`);
    const j = new ManifestJournal(file);
    await j.open(false);
    await j.append(row('c'));
    await j.close();
    expect(await wholeRows(file)).toEqual(['a', 'c']);
    expect((await readManifest(file)).skippedLines).toBe(0);
  });

  // A real full disk, when this machine lets the test mount a 8 kB tmpfs (root, not in a restricted container).
  const mountRoot = mkdtempSync(join(tmpdir(), 'rankfold-journal-mnt-'));
  const tiny = join(mountRoot, 'tiny');
  mkdirSync(tiny);
  const mounted = spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=8k', 'tmpfs', tiny]).status === 0;
  afterAll(() => {
    if (mounted) spawnSync('umount', [tiny]);
    rmSync(mountRoot, { recursive: true, force: true });
  });
  it.skipIf(!mounted)('on a real full disk (8 kB tmpfs) the journal holds whole rows only', async () => {
    const file = join(tiny, 'rankfold-manifest.jsonl');
    const j = new ManifestJournal(file);
    await j.open(true);
    const paths = Array.from({ length: 20 }, (_, i) => `page-${String(i).padStart(2, '0')}.png`);
    // ~1 kB rows, so one of them straddles the end of the space.
    for (const p of paths) await j.append(row(p, 900));
    await j.close();
    const kept = await wholeRows(file);
    expect(kept.length).toBeGreaterThan(0);
    expect(kept.length).toBeLessThan(paths.length);
    expect(kept).toEqual(paths.slice(0, kept.length));
    expect(j.lost).toBe(paths.length - kept.length);
    expect((j.error as NodeJS.ErrnoException).code).toBe('ENOSPC');
  });
});

describe('lock: one run per manifest', () => {
  const env = (over: Partial<LockEnv> = {}): LockEnv => ({
    pid: 4242,
    host: 'scanner-1',
    alive: () => true,
    now: () => new Date('2026-12-01T09:00:00.000Z'),
    ...over,
  });

  it('refuses a second run on the same manifest, naming the folder and the other run', async () => {
    const m = join(dir, 'one', 'rankfold-manifest.jsonl');
    mkdirSync(join(dir, 'one'));
    const first = await acquireBatchLock(m, 'out/one', env());
    const err = await acquireBatchLock(m, 'out/one', env({ pid: 5151 })).catch((e) => e);
    expect(err).toBeInstanceOf(UsageError);
    expect(err.message).toBe(
      `output folder out/one is in use by another rankfold batch (pid 4242 on host scanner-1, started 2026-12-01T09:00:00.000Z), which holds ${lockPathFor(m)}; wait for it to end, or choose another -o`,
    );
    await first.release();
    expect(existsSync(lockPathFor(m))).toBe(false);
    const again = await acquireBatchLock(m, 'out/one', env({ pid: 5151 }));
    await again.release();
  });

  it('lets the shards of one batch share a folder: each shard locks its own manifest', async () => {
    mkdirSync(join(dir, 'shared'));
    const locks = await Promise.all(
      [0, 1, 2].map((i) =>
        acquireBatchLock(join(dir, 'shared', `${manifestBase(i, 3)}.jsonl`), 'shared', env({ pid: 100 + i })),
      ),
    );
    expect(new Set(locks.map((l) => l.file)).size).toBe(3);
    for (const l of locks) await l.release();
    expect((await readdir(join(dir, 'shared'))).filter((f) => f.endsWith('.lock'))).toEqual([]);
  });

  it('of two runs that race for one manifest, exactly one gets the lock', async () => {
    mkdirSync(join(dir, 'race'));
    const m = join(dir, 'race', 'rankfold-manifest.jsonl');
    const tries = await Promise.allSettled(
      Array.from({ length: 6 }, (_, i) => acquireBatchLock(m, 'race', env({ pid: 200 + i }))),
    );
    expect(tries.filter((t) => t.status === 'fulfilled')).toHaveLength(1);
  });

  it('takes over the lock of a dead run on this host, with a notice', async () => {
    mkdirSync(join(dir, 'stale'));
    const m = join(dir, 'stale', 'rankfold-manifest.jsonl');
    await acquireBatchLock(m, 'stale', env({ pid: 31337 })); // never released: the run was killed
    const l = await acquireBatchLock(m, 'stale', env({ pid: 4243, alive: (i) => i.pid !== 31337 }));
    expect(l.notice).toBe(
      `took over the lock ${lockPathFor(m)} of a batch that is no longer running (pid 31337 on host scanner-1, started 2026-12-01T09:00:00.000Z)`,
    );
    expect(JSON.parse(await readFile(lockPathFor(m), 'utf8')).pid).toBe(4243);
    expect(existsSync(`${lockPathFor(m)}.takeover`)).toBe(false);
    await l.release();
  });

  it('refuses a lock from another host (its pid cannot be checked from here)', async () => {
    mkdirSync(join(dir, 'nfs'));
    const m = join(dir, 'nfs', 'rankfold-manifest.jsonl');
    await acquireBatchLock(m, 'nfs', env({ host: 'node-7', pid: 12 }));
    await expect(acquireBatchLock(m, 'nfs', env({ alive: () => false }))).rejects.toThrow(
      /in use by another rankfold batch \(pid 12 on host node-7, .*if that run is gone, delete the lock file/,
    );
  });

  it('refuses a lock file it cannot read, and never removes a lock it does not hold', async () => {
    mkdirSync(join(dir, 'foreign'));
    const m = join(dir, 'foreign', 'rankfold-manifest.jsonl');
    await writeFile(lockPathFor(m), 'not json');
    await expect(acquireBatchLock(m, 'foreign', env())).rejects.toThrow(
      `output folder foreign has a lock file ${lockPathFor(m)} that is not a rankfold lock; if no batch is running there, delete it and run again`,
    );
    await rm(lockPathFor(m));
    const a = await acquireBatchLock(m, 'foreign', env());
    await rm(lockPathFor(m)); // someone removed it by hand, and another run took it
    const b = await acquireBatchLock(m, 'foreign', env({ pid: 9 }));
    await a.release();
    expect(JSON.parse(await readFile(lockPathFor(m), 'utf8')).pid).toBe(9);
    await b.release();
  });

  it('processAlive: this process is alive; a pid that cannot exist is not', () => {
    expect(processAlive({ pid: process.pid })).toBe(true);
    expect(processAlive({ pid: 2 ** 22 + 1 })).toBe(false);
    expect(processAlive({ pid: -1 })).toBe(false);
  });
});
