/**
 * Atomic output: write to a temporary file in the destination folder, fsync it, rename it over the
 * target, then fsync the folder. A crash or kill leaves either the old state or the complete new file,
 * never a partial one. Temporary names start with `.rankfold-tmp-` so a resumed batch can sweep them.
 */
import { randomBytes } from 'node:crypto';
import { constants } from 'node:fs';
import { access, mkdir, open, readdir, rename, unlink } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { hinted, OutputError } from '../../contract';

const OVERWRITE_ADVICE = '; pass --force to overwrite it';
/** The refusal of an existing output (the app words the advice its own way, by the hint). */
const alreadyExists = (path: string) =>
  new OutputError(path, `already exists${OVERWRITE_ADVICE}`, hinted('overwrite', OVERWRITE_ADVICE));

export const TEMP_PREFIX = '.rankfold-tmp-';

export interface WriteOptions {
  /** Replace an existing file. Default false: an existing output is an error. */
  force?: boolean;
  /** Create missing parent folders. Default true. */
  mkdirs?: boolean;
}

/** True if a file exists at `path`. */
async function exists(path: string): Promise<boolean> {
  try {
    await access(path, constants.F_OK);
    return true;
  } catch {
    return false;
  }
}

/** Throw OutputError if `path` exists and force is not set. */
export async function assertWritable(path: string, force = false): Promise<void> {
  if (!force && (await exists(path))) throw alreadyExists(path);
}

/** Write `data` to `path` atomically. */
export async function writeFileAtomic(
  path: string,
  data: Uint8Array | string,
  options: WriteOptions = {},
): Promise<void> {
  const dir = dirname(path);
  if (options.mkdirs !== false) {
    try {
      await mkdir(dir, { recursive: true });
    } catch (err) {
      throw describeWriteError(path, err);
    }
  }
  await assertWritable(path, options.force);
  const tmp = join(dir, `${TEMP_PREFIX}${randomBytes(6).toString('hex')}-${basename(path)}`);
  let fh: Awaited<ReturnType<typeof open>> | undefined;
  try {
    fh = await open(tmp, 'wx', 0o644);
    await fh.writeFile(data);
    await fh.sync();
    await fh.close();
    fh = undefined;
    if (!options.force && (await exists(path))) throw alreadyExists(path);
    await rename(tmp, path);
  } catch (err) {
    if (fh) await fh.close().catch(() => {});
    await unlink(tmp).catch(() => {});
    throw err instanceof OutputError ? err : describeWriteError(path, err);
  }
  await syncDir(dir);
}

/** Remove our own stale temp files for the given outputs (never another shard's). */
export async function sweepTemps(outputs: string[]): Promise<number> {
  const byDir = new Map<string, Set<string>>();
  for (const o of outputs) {
    const d = dirname(o);
    const set = byDir.get(d) ?? new Set<string>();
    set.add(basename(o));
    byDir.set(d, set);
  }
  let removed = 0;
  for (const [dir, names] of byDir) {
    let entries: string[];
    try {
      entries = await readdir(dir);
    } catch {
      continue;
    }
    for (const e of entries) {
      if (!e.startsWith(TEMP_PREFIX)) continue;
      // Temp names are `${TEMP_PREFIX}<12 hex>-<final name>`.
      const m = /^[0-9a-f]{12}-(.*)$/s.exec(e.slice(TEMP_PREFIX.length));
      if (!m || !names.has(m[1])) continue;
      try {
        await unlink(join(dir, e));
        removed++;
      } catch {}
    }
  }
  return removed;
}

async function syncDir(dir: string) {
  try {
    const d = await open(dir, 'r');
    try {
      await d.sync();
    } finally {
      await d.close();
    }
  } catch {
    // Some file systems refuse fsync on folders; the rename is still atomic there.
  }
}

/** Map an errno to a sentence a user can act on. */
export function describeWriteError(path: string, err: unknown): OutputError {
  const code = (err as NodeJS.ErrnoException)?.code;
  switch (code) {
    case 'EACCES':
    case 'EPERM':
      return new OutputError(path, 'permission denied when writing; choose a folder you can write to', {
        code,
      });
    case 'EROFS':
      return new OutputError(path, 'the file system is read-only', { code });
    case 'ENOSPC':
    case 'EDQUOT':
      return new OutputError(path, 'the disk is full (no space left); free space and run again', { code });
    case 'ENOTDIR':
      return new OutputError(path, 'a part of the output path is a file, not a folder', { code });
    case 'ENAMETOOLONG':
      return new OutputError(path, 'the output path is too long for this file system', { code });
    default:
      return new OutputError(path, `cannot be written (${code ?? (err as Error)?.message ?? String(err)})`, {
        code,
      });
  }
}
