/**
 * Open a scan file before any decoder sees it: a regular, non-empty file this process can read, its first
 * bytes and the format they announce, and file-system errors in a user's words (one sentence naming the file).
 */
import { constants } from 'node:fs';
import { type FileHandle, open, stat } from 'node:fs/promises';
import { InputError } from '../../contract';

/** The format a file's first bytes announce (PNG, TIFF, JPEG, WebP signatures), or undefined. */
export function sniffFormat(head: Uint8Array): string | undefined {
  const at = (i: number, ...b: number[]) => b.every((x, k) => head[i + k] === x);
  if (at(0, 0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a)) return 'PNG';
  if (at(0, 0x49, 0x49, 0x2a, 0x00) || at(0, 0x4d, 0x4d, 0x00, 0x2a)) return 'TIFF';
  if (at(0, 0x49, 0x49, 0x2b, 0x00) || at(0, 0x4d, 0x4d, 0x00, 0x2b)) return 'TIFF';
  if (at(0, 0xff, 0xd8, 0xff)) return 'JPEG';
  if (at(0, 0x52, 0x49, 0x46, 0x46) && at(8, 0x57, 0x45, 0x42, 0x50)) return 'WebP';
  return undefined;
}

/** The signature name for a sharp format id, for messages. */
export function sniffFormatOf(format: string | undefined): string | undefined {
  return format === 'png'
    ? 'PNG'
    : format === 'tiff'
      ? 'TIFF'
      : format === 'jpeg'
        ? 'JPEG'
        : format === 'webp'
          ? 'WebP'
          : undefined;
}

/** What a path that cannot be opened gets, by errno code (POSIX.1-2017 <errno.h> names, as Node reports them). */
const FS_PROBLEMS: Record<string, string> = {
  ENOENT: 'no such file',
  EACCES: 'permission denied when reading; check that you may read the file and open every folder above it',
  EPERM:
    'permission denied when reading (the operation is not permitted); check the file and the folders above it',
  ELOOP:
    'cannot be opened because its path runs through a loop of symbolic links (or too many links in a row)',
  ENAMETOOLONG:
    'cannot be opened because its name, or the name of a folder in its path, is too long for the file system',
  ENOTDIR: 'cannot be opened because a part of its path is a file, not a folder',
  EISDIR: 'is a folder, not an image file',
  EIO: 'cannot be read because the disk or device reported an input/output error; the medium may be failing',
  ENXIO: 'cannot be opened because the device behind it is not available',
  ENODEV: 'cannot be opened because the device behind it is not available',
  EMFILE: 'cannot be opened because too many files are open at once; try again with fewer jobs',
  ENFILE: 'cannot be opened because too many files are open on this system; try again with fewer jobs',
  ENOMEM: 'cannot be read because the system ran out of memory',
  EOVERFLOW: 'cannot be read because it is too large for this system to open',
  EFBIG: 'cannot be read because it is too large for this system to open',
  EBUSY: 'cannot be opened because it is busy (in use by the system)',
  ETXTBSY: 'cannot be opened because it is busy (in use by the system)',
  ESTALE: 'cannot be read because its network share is no longer available (stale file handle)',
  EAGAIN: 'cannot be read right now (the system asked to try again later)',
  EINVAL: 'cannot be opened because the file system does not accept this name',
  EILSEQ: 'cannot be opened because the file system does not accept the characters in this name',
};

/**
 * Turn a file-system error about `file` into an InputError in the user's words. A name holding U+FFFD
 * that is not found is almost always a name that was not valid UTF-8: Node decodes command-line
 * arguments lossily, so the original bytes are gone and the file cannot be found by this name.
 */
export function describeFileError(file: string, err: unknown): InputError {
  const code = (err as NodeJS.ErrnoException | undefined)?.code;
  if (code === 'ENOENT' && file.includes('\uFFFD'))
    return new InputError(
      file,
      'no such file; its name has bytes that are not valid UTF-8 (shown as �), which are lost before Rankfold sees them, so rename the file with valid characters and try again',
      { code },
    );
  const problem = code ? FS_PROBLEMS[code] : undefined;
  if (problem) return new InputError(file, problem, { code });
  const what = code ? `the system reported error ${code}` : 'the system reported an unknown error';
  return new InputError(file, `cannot be read (${what})`, { code });
}

/**
 * Check that `file` is a regular, non-empty file this process can open and read, and return its size and
 * first bytes. Special files are refused before they are opened (opening a FIFO for reading would block).
 * The file is really opened (not only `access`-checked), so permission problems show up here, by name,
 * and not later as "not an image".
 * @throws InputError naming the file and the problem.
 */
export async function openInput(file: string): Promise<{ size: number; head: Uint8Array }> {
  let st: Awaited<ReturnType<typeof stat>>;
  try {
    st = await stat(file);
  } catch (err) {
    throw describeFileError(file, err);
  }
  if (st.isDirectory()) throw new InputError(file, 'is a folder, not an image file');
  if (st.isFIFO()) throw new InputError(file, 'is a named pipe (FIFO), not an image file');
  if (st.isSocket()) throw new InputError(file, 'is a socket, not an image file');
  if (st.isCharacterDevice() || st.isBlockDevice())
    throw new InputError(file, 'is a device, not an image file');
  if (!st.isFile()) throw new InputError(file, 'is not a regular file');
  if (st.size === 0) throw new InputError(file, 'is empty (0 bytes)');
  let fh: FileHandle | undefined;
  try {
    fh = await open(file, constants.O_RDONLY);
    const head = new Uint8Array(64);
    const { bytesRead } = await fh.read(head, 0, head.length, 0);
    return { size: st.size, head: head.subarray(0, bytesRead) };
  } catch (err) {
    throw describeFileError(file, err);
  } finally {
    await fh?.close().catch(() => undefined);
  }
}
