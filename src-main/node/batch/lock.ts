/**
 * One batch at a time per manifest: a lock file `MANIFEST.lock` beside the manifest, held while the run
 * writes outputs, the journal, the CSV and the report. Shards of one batch share OUT_DIR but each has its
 * own manifest (`rankfold-manifest-IofN.jsonl`, docs/scale.md), so they lock different files and run side
 * by side; two runs of the same shard (or two unsharded runs) into one folder are refused.
 *
 * The lock is created whole or not at all: its text is written to a temporary file, which is then
 * hard-linked to the lock name. link() fails with EEXIST when the name exists (POSIX link()), so exactly
 * one of two racing runs gets it, and a reader never sees a half-written lock. (Hard-linking a unique
 * temporary file is the common-practice exclusive create for NFS, where O_EXCL was historically unreliable.)
 *
 * A lock left by a run that died (SIGKILL, power loss) is stale when it names this host and a pid that no
 * longer exists (kill(pid, 0) fails with ESRCH, POSIX kill()). Such a lock is taken over with a notice. A lock
 * from another host cannot be checked from here, so it is refused with the advice to delete it if that run is
 * gone. Takeover is serialised by a second exclusive file, `MANIFEST.lock.takeover`, so two runs that both
 * find the same stale lock cannot both take it.
 */
import { randomBytes } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { link, open, readFile, unlink } from 'node:fs/promises';
import { hostname } from 'node:os';
import { basename, dirname, join } from 'node:path';
import { UsageError } from '../../contract';
import { TEMP_PREFIX } from '../io/atomic';

export interface LockInfo {
  pid: number;
  host: string;
  /** ISO-8601 start time of the run that holds the lock. */
  started: string;
  /** Random tag of this holder, so a run only ever removes its own lock. */
  nonce: string;
  /** Linux: the holder's start time in clock ticks since boot (/proc/PID/stat field 22), so a pid reused
   *  by an unrelated process after a crash is not mistaken for the holder. */
  procStart?: string;
  /** The folder the run writes into, as given on its command line. */
  outDir?: string;
}

export interface BatchLock {
  file: string;
  info: LockInfo;
  /** Set when a stale lock was taken over: one sentence for the user. */
  notice?: string;
  release(): Promise<void>;
}

/** How a lock is checked; tests replace these to play another host or a dead pid. */
export interface LockEnv {
  pid: number;
  host: string;
  /** True when the process that wrote `info` still runs on this host. */
  alive(info: Pick<LockInfo, 'pid' | 'procStart'>): boolean;
  /** This process's `procStart`, when the platform tells. */
  procStart?: string;
  now(): Date;
}

/** Linux /proc/PID/stat: state (field 3) and start time (field 22); undefined elsewhere or when gone. */
function procStat(pid: number | 'self'): { state: string; start: string } | undefined {
  try {
    const text = readFileSync(`/proc/${pid}/stat`, 'utf8');
    // The command name (field 2) is in parentheses and may itself hold spaces or ')'.
    const rest = text.slice(text.lastIndexOf(')') + 2).split(' ');
    return { state: rest[0], start: rest[19] };
  } catch {
    return undefined;
  }
}

/**
 * True when the lock holder still runs. kill(pid, 0) tells whether the pid exists (POSIX kill(); EPERM: it
 * exists but belongs to another user). On Linux, a zombie (state Z: it died and its parent has not collected
 * it yet) or one that is exiting (its command line is already gone) counts as dead, and so does a live
 * process with another start time (the pid was reused).
 */
export function processAlive(info: Pick<LockInfo, 'pid' | 'procStart'>): boolean {
  const { pid } = info;
  if (!Number.isInteger(pid) || pid <= 0) return false;
  try {
    process.kill(pid, 0);
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code !== 'EPERM') return false;
  }
  const st = procStat(pid);
  if (st && (st.state === 'Z' || st.state === 'X')) return false;
  if (st && info.procStart && st.start !== info.procStart) return false;
  // A process that is exiting has already released its memory, and with it its command line.
  try {
    if (st && readFileSync(`/proc/${pid}/cmdline`).length === 0) return false;
  } catch {}
  return true;
}

const defaultLockEnv = (): LockEnv => ({
  pid: process.pid,
  host: hostname(),
  alive: processAlive,
  now: () => new Date(),
  procStart: procStat('self')?.start,
});

export const lockPathFor = (manifest: string) => `${manifest}.lock`;

function parseLock(text: string): LockInfo | undefined {
  try {
    const v = JSON.parse(text) as LockInfo;
    if (Number.isInteger(v?.pid) && typeof v.host === 'string' && typeof v.started === 'string') return v;
  } catch {}
  return undefined;
}

async function readLock(file: string): Promise<LockInfo | 'missing' | 'unreadable'> {
  try {
    return parseLock(await readFile(file, 'utf8')) ?? 'unreadable';
  } catch (err) {
    return (err as NodeJS.ErrnoException).code === 'ENOENT' ? 'missing' : 'unreadable';
  }
}

/** Create `file` with `text` only if the name is free. True on success, false when it exists. */
async function createExclusive(file: string, text: string): Promise<boolean> {
  const tmp = join(dirname(file), `${TEMP_PREFIX}${randomBytes(6).toString('hex')}-${basename(file)}`);
  const fh = await open(tmp, 'wx', 0o644);
  try {
    await fh.writeFile(text);
    await fh.sync();
  } finally {
    await fh.close();
  }
  try {
    await link(tmp, file);
    return true;
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'EEXIST') return false;
    throw err;
  } finally {
    await unlink(tmp).catch(() => {});
  }
}

const describe = (i: LockInfo) => `pid ${i.pid} on host ${i.host}, started ${i.started}`;

/**
 * Take the lock for a batch that writes `manifest` into `outDirAsGiven`.
 * @throws UsageError naming the folder and the other run when another live run holds it.
 */
export async function acquireBatchLock(
  manifest: string,
  outDirAsGiven: string,
  env: LockEnv = defaultLockEnv(),
): Promise<BatchLock> {
  const file = lockPathFor(manifest);
  const info: LockInfo = {
    pid: env.pid,
    host: env.host,
    started: env.now().toISOString(),
    nonce: randomBytes(9).toString('base64url'),
    outDir: outDirAsGiven,
    procStart: env.procStart,
  };
  const text = `${JSON.stringify(info)}\n`;
  const release = async () => {
    const now = await readLock(file);
    if (typeof now === 'object' && now.nonce === info.nonce) await unlink(file).catch(() => {});
  };
  const busy = (other: LockInfo, extra: string) =>
    new UsageError(
      `output folder ${outDirAsGiven} is in use by another rankfold batch (${describe(other)}), which holds ${file}; ${extra}`,
    );
  let notice: string | undefined;
  // A few rounds: the lock may vanish or change hands between our attempts.
  for (let round = 0; round < 5; round++) {
    if (await createExclusive(file, text)) return { file, info, notice, release };
    const other = await readLock(file);
    if (other === 'missing') continue;
    if (other === 'unreadable')
      throw new UsageError(
        `output folder ${outDirAsGiven} has a lock file ${file} that is not a rankfold lock; if no batch is running there, delete it and run again`,
      );
    if (other.host !== env.host)
      throw busy(other, 'wait for it to end; if that run is gone, delete the lock file and run again');
    if (env.alive(other)) throw busy(other, 'wait for it to end, or choose another -o');
    // Stale: the holder died on this host. Take it over, one taker at a time.
    const gate = `${file}.takeover`;
    if (!(await createExclusive(gate, text))) {
      const taker = await readLock(gate);
      if (typeof taker === 'object' && taker.host === env.host && !env.alive(taker))
        await unlink(gate).catch(() => {});
      else if (typeof taker === 'object')
        throw busy(taker, 'it is taking over a stale lock; wait for it to end');
      continue;
    }
    try {
      const again = await readLock(file);
      if (typeof again === 'object' && again.nonce === other.nonce) {
        await unlink(file).catch(() => {});
        notice = `took over the lock ${file} of a batch that is no longer running (${describe(other)})`;
      }
    } finally {
      await unlink(gate).catch(() => {});
    }
  }
  throw new UsageError(
    `output folder ${outDirAsGiven}: the lock ${file} kept changing hands; another batch is starting there — run again later`,
  );
}
