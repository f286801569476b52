/**
 * Plan a batch: walk IN_DIR, filter, map every input to one output path under OUT_DIR, and take a shard.
 *
 * Output names (documented in docs/cli.md):
 * 1. `dir/name.ext` → `dir/name.rkf` (the folder structure is mirrored).
 * 2. If two or more inputs in one folder would get the same output name — compared without case and after
 *    Unicode NFC, so the result is safe on case-insensitive disks too — every one of them keeps its whole
 *    name: `a.png` → `a.png.rkf`, `a.tif` → `a.tif.rkf`.
 * 3. If names still collide after step 2, each member of the group gets `~` and the first 8 hex digits of
 *    SHA-256 of its relative path before `.rkf`.
 * The rule looks only at the set of names, so it does not depend on listing order, and it is computed on
 * the whole tree before sharding, so every shard agrees on every name.
 */
import { createHash } from 'node:crypto';
import { lstat, readdir, readlink, realpath, stat } from 'node:fs/promises';
import { basename, dirname, extname, isAbsolute, join, relative, resolve, sep } from 'node:path';
import picomatch from 'picomatch';
import { type Shard, UsageError } from '../../contract';

const OUTPUT_EXT = '.rkf';

export interface PlannedFile {
  /** Relative input path, '/'-separated, NFC. */
  path: string;
  /** Relative output path, '/'-separated. */
  output: string;
  inputAbs: string;
  outputAbs: string;
  /** Size from the walk's stat (0 when unreadable). */
  size: number;
}

interface WalkProblem {
  path: string;
  message: string;
}

export interface PlanOptions {
  include?: string[];
  exclude?: string[];
  shard?: Shard;
}

export interface Plan {
  inDir: string;
  outDir: string;
  /** Files of this shard, sorted by path. */
  files: PlannedFile[];
  /** Files in the whole tree before sharding. */
  totalInTree: number;
  /** Entries of this shard that are not regular files: listed, never opened. Sorted by path. */
  skipped: SkippedEntry[];
  /** Folders that could not be listed (permission errors); reported, not fatal. */
  problems: WalkProblem[];
}

/** Stable hash of a relative path: SHA-256 of its NFC UTF-8 bytes, first 48 bits as an integer. */
function pathHash(rel: string): number {
  const h = createHash('sha256').update(rel.normalize('NFC'), 'utf8').digest();
  return h.readUIntBE(0, 6);
}

/** The shard (0-based) a relative path belongs to among `count` shards. */
export function shardOf(rel: string, count: number): number {
  return pathHash(rel) % count;
}

/** Normalise a relative path to the manifest form: '/'-separated, NFC. */
function toRel(p: string): string {
  return p.split(sep).join('/').normalize('NFC');
}

/** Resolve as much of `p` as exists through realpath, and append the rest. */
async function realpathLoose(p: string): Promise<string> {
  const abs = resolve(p);
  const tail: string[] = [];
  let cur = abs;
  for (;;) {
    try {
      const r = await realpath(cur);
      return tail.length ? join(r, ...tail.reverse()) : r;
    } catch {
      const parent = dirname(cur);
      if (parent === cur) return abs;
      tail.push(basename(cur));
      cur = parent;
    }
  }
}

/** True when `child` is `parent` or lies below it (both absolute). */
export function isInside(child: string, parent: string): boolean {
  const r = relative(parent, child);
  return r === '' || (!r.startsWith('..') && !isAbsolute(r));
}

/**
 * Check IN_DIR and OUT_DIR. Refuses a missing IN_DIR, OUT_DIR equal to IN_DIR, and OUT_DIR inside IN_DIR
 * (symbolic links resolved), so nothing is ever written inside the inputs.
 * @throws UsageError
 */
export async function checkFolders(
  inDir: string,
  outDir: string,
): Promise<{ inDir: string; outDir: string }> {
  let st: Awaited<ReturnType<typeof stat>>;
  try {
    st = await stat(inDir);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    throw new UsageError(
      code === 'ENOENT'
        ? `input folder ${inDir} does not exist`
        : `input folder ${inDir} cannot be read (${code})`,
    );
  }
  if (!st.isDirectory())
    throw new UsageError(
      `${inDir} is a file, not a folder; batch takes a folder (use compress for one file)`,
    );
  const realIn = await realpath(inDir);
  const realOut = await realpathLoose(outDir);
  if (realOut === realIn)
    throw new UsageError(
      `output folder ${outDir} is the input folder; batch never writes inside the input folder — choose another -o`,
    );
  if (isInside(realOut, realIn))
    throw new UsageError(
      `output folder ${outDir} is inside the input folder ${inDir}; batch never writes inside the input folder — choose an -o outside it`,
    );
  try {
    const o = await stat(realOut);
    if (!o.isDirectory()) throw new UsageError(`output path ${outDir} is a file, not a folder`);
  } catch (err) {
    if (err instanceof UsageError) throw err;
  }
  return { inDir: realIn, outDir: realOut };
}

/**
 * An entry the walk saw but batch does not open: not a regular file. Opening a FIFO blocks until a writer
 * appears (POSIX open(): O_RDONLY without O_NONBLOCK), and a device such as /dev/zero never ends, so these
 * are listed with the reason instead of being handed to the compressor.
 */
export interface SkippedEntry {
  /** Relative path, '/'-separated, NFC. */
  path: string;
  inputAbs: string;
  /** What the entry is, as the end of a sentence: "is a FIFO (named pipe), not a regular file". */
  reason: string;
}

type StatLike = Pick<
  import('node:fs').Stats,
  'isFIFO' | 'isCharacterDevice' | 'isBlockDevice' | 'isSocket' | 'isDirectory' | 'isFile'
>;

/** The kind of a non-regular file system object, with its article ("a FIFO (named pipe)"). */
function specialKind(s: StatLike): string | undefined {
  if (s.isFile()) return undefined;
  if (s.isFIFO()) return 'a FIFO (named pipe)';
  if (s.isCharacterDevice()) return 'a character device';
  if (s.isBlockDevice()) return 'a block device';
  if (s.isSocket()) return 'a socket';
  if (s.isDirectory()) return 'a folder';
  return 'not a regular file';
}

/** Why a symbolic link is skipped, or undefined when it leads to a regular file. `abs` is the link. */
async function linkReason(abs: string): Promise<{ reason?: string; size: number }> {
  let target = '';
  try {
    target = await readlink(abs);
  } catch {}
  try {
    const s = await stat(abs);
    if (s.isFile()) return { size: s.size };
    if (s.isDirectory())
      return {
        reason: `is a symbolic link to the folder ${target}; batch does not follow links to folders`,
        size: 0,
      };
    return {
      reason: `is a symbolic link to ${target}, ${specialKind(s)}, not a regular file; it was not opened`,
      size: 0,
    };
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ENOTDIR')
      return { reason: `is a broken symbolic link: its target ${target} does not exist`, size: 0 };
    if (code === 'ELOOP')
      return {
        reason: `is a symbolic link that loops (it points to ${target}) and never reaches a file`,
        size: 0,
      };
    // Permission and other problems: the compressor opens it and reports them for this file.
    return { size: 0 };
  }
}

/**
 * Walk a folder recursively. Hidden entries (name starts with '.') are left out; every other entry is either
 * a file to compress or a {@link SkippedEntry} (special files, links to them or to folders, broken or looping
 * links). Symbolic links to folders are not followed.
 */
async function walk(root: string): Promise<{
  files: { rel: string; abs: string; size: number }[];
  skipped: SkippedEntry[];
  problems: WalkProblem[];
}> {
  const files: { rel: string; abs: string; size: number }[] = [];
  const skipped: SkippedEntry[] = [];
  const problems: WalkProblem[] = [];
  async function visit(dir: string) {
    let entries: import('node:fs').Dirent[];
    try {
      entries = await readdir(dir, { withFileTypes: true });
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      problems.push({
        path: toRel(relative(root, dir)) || '.',
        message: `folder cannot be listed (${code === 'EACCES' || code === 'EPERM' ? 'permission denied' : code}); its files were not processed`,
      });
      return;
    }
    for (const e of entries) {
      if (e.name.startsWith('.')) continue;
      const abs = join(dir, e.name);
      const rel = toRel(relative(root, abs));
      if (e.isDirectory()) await visit(abs);
      else if (e.isFile()) {
        let size = 0;
        try {
          size = (await lstat(abs)).size;
        } catch {}
        files.push({ rel, abs, size });
      } else if (e.isSymbolicLink()) {
        const l = await linkReason(abs);
        if (l.reason) skipped.push({ path: rel, inputAbs: abs, reason: l.reason });
        else files.push({ rel, abs, size: l.size });
      } else {
        skipped.push({
          path: rel,
          inputAbs: abs,
          reason: `is ${specialKind(e)}, not a regular file; it was not opened`,
        });
      }
    }
  }
  await visit(root);
  return { files, skipped, problems };
}

/** Output names for a set of relative input paths, by the rule in this file's header. */
export function outputNames(rels: string[]): Map<string, string> {
  const key = (p: string) => p.normalize('NFC').toLowerCase();
  const stemOf = (rel: string) => {
    const d = dirname(rel);
    const b = basename(rel);
    const e = extname(b);
    const stem = e && e !== b ? b.slice(0, -e.length) : b;
    return (d === '.' ? '' : `${d}/`) + stem;
  };
  const first = new Map<string, string[]>();
  for (const r of rels) {
    const k = key(stemOf(r) + OUTPUT_EXT);
    const g = first.get(k);
    if (g) g.push(r);
    else first.set(k, [r]);
  }
  const second = new Map<string, string>();
  for (const [, group] of first)
    for (const r of group) second.set(r, (group.length > 1 ? r : stemOf(r)) + OUTPUT_EXT);
  const byName = new Map<string, string[]>();
  for (const [r, o] of second) {
    const k = key(o);
    const g = byName.get(k);
    if (g) g.push(r);
    else byName.set(k, [r]);
  }
  const out = new Map<string, string>();
  for (const [, group] of byName) {
    for (const r of group) {
      const o = second.get(r)!;
      if (group.length === 1) out.set(r, o);
      else {
        const tag = createHash('sha256').update(r.normalize('NFC'), 'utf8').digest('hex').slice(0, 8);
        out.set(r, `${o.slice(0, -OUTPUT_EXT.length)}~${tag}${OUTPUT_EXT}`);
      }
    }
  }
  return out;
}

/** Compile include/exclude globs (picomatch, matched against the '/'-separated relative path). */
export function fileFilter(include: string[] = [], exclude: string[] = []): (rel: string) => boolean {
  const opts = { dot: false, nocase: false };
  const fix = (raw: string) => {
    const g = raw.replace(/^\.\//, '');
    return g.includes('/') ? g : `**/${g}`;
  };
  let inc: ((s: string) => boolean) | undefined;
  let exc: ((s: string) => boolean) | undefined;
  try {
    inc = include.length ? picomatch(include.map(fix), opts) : undefined;
    exc = exclude.length ? picomatch(exclude.map(fix), opts) : undefined;
  } catch (err) {
    throw new UsageError(`cannot read a --include/--exclude pattern (${(err as Error).message})`);
  }
  return (rel) => (!inc || inc(rel)) && !exc?.(rel);
}

/** Walk, filter, name and shard. Folders must already be checked with {@link checkFolders}. */
export async function planBatch(inDir: string, outDir: string, options: PlanOptions = {}): Promise<Plan> {
  const { files, skipped, problems } = await walk(inDir);
  const keep = fileFilter(options.include, options.exclude);
  const selected = files.filter((f) => keep(f.rel));
  const names = outputNames(selected.map((f) => f.rel));
  const shard = options.shard ?? { index: 0, count: 1 };
  const planned: PlannedFile[] = [];
  for (const f of selected) {
    if (shard.count > 1 && shardOf(f.rel, shard.count) !== shard.index) continue;
    const output = names.get(f.rel)!;
    const outputAbs = join(outDir, ...output.split('/'));
    if (isInside(outputAbs, inDir))
      throw new UsageError(
        `output ${outputAbs} would land inside the input folder ${inDir}; choose another -o`,
      );
    planned.push({ path: f.rel, output, inputAbs: f.abs, outputAbs, size: f.size });
  }
  planned.sort((a, b) => (a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
  const mine = skipped
    .filter((f) => keep(f.path))
    .filter((f) => shard.count <= 1 || shardOf(f.path, shard.count) === shard.index)
    .sort((a, b) => (a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
  return { inDir, outDir, files: planned, totalInTree: selected.length, skipped: mine, problems };
}

/** Right before a file is handed to a worker: is it (still) a regular file? Narrows the window in which a
 *  file swapped for a FIFO after the walk could be opened. Undefined: go ahead. */
export async function notRegularNow(f: PlannedFile): Promise<SkippedEntry | undefined> {
  try {
    const s = await stat(f.inputAbs);
    if (s.isFile()) return undefined;
    return {
      path: f.path,
      inputAbs: f.inputAbs,
      reason: `is ${specialKind(s)}, not a regular file (it changed during the batch); it was not opened`,
    };
  } catch {
    return undefined; // the compressor reports the problem for this file
  }
}

/** Files in the order they are handed to workers: largest first, ties by path. */
export function dispatchOrder(files: PlannedFile[]): PlannedFile[] {
  return files.slice().sort((a, b) => b.size - a.size || (a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
}
