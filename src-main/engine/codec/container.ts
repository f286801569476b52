/**
 * The .rkf container: a preamble, then chunks each carrying its own CRC-32, then an index chunk and a
 * fixed trailer that points at the index, so a reader can reach any chunk without reading the others.
 * Layout (all integers big-endian; see docs/format.md):
 *
 *   preamble  8  magic 89 52 4B 46 0D 0A 1A 0A ("\x89RKF\r\n\x1a\n")
 *             2  major version (1), 2 minor version (1; files of version 1.0 are still read)
 *   chunk     4  type (ASCII letters; lower-case first letter = ancillary, may be skipped)
 *             4  id (plane, frame or other number, by type)
 *             4  payload length L
 *             L  payload
 *             4  CRC-32 of type, id, length and payload
 *   ...       the first chunk is always HEAD (UTF-8 JSON header)
 *   fchk      (version ≥ 1.1) the file check, last before the index: a copy of the version (4 bytes) and
 *             the CRC-32 stored after HEAD (4 bytes), so that the version field and the header are covered
 *             by a check that a 1.0 reader, which skips this ancillary chunk, does not need to know
 *   index     an INDX chunk: count, then per chunk: type, id, offset (u64 as 2×u32), length
 *   trailer  16  "RKFI", u32 offset of INDX high, u32 low, CRC-32 of the 12 bytes before it
 *
 * Nothing may follow the trailer: the index must end where the trailer begins. Chunk types follow PNG's
 * critical/ancillary convention (W3C PNG 3rd ed. §5.4): a reader refuses an upper-case (critical) type it
 * does not know and skips a lower-case (ancillary) one ({@link refuseUnknownCritical}).
 * Version ≥ 1.3 files use the compact framing of ./container-compact instead (varint chunk headers, one
 * CRC-32 of the whole file, no index or trailer); the same ContainerView reads both.
 */
import { FormatError } from '../../contract/errors';
import { readCompact, writeCompact } from './container-compact';
import { crc32 } from './crc32';

const MAGIC = Uint8Array.from([0x89, 0x52, 0x4b, 0x46, 0x0d, 0x0a, 0x1a, 0x0a]);
const VERSION_MAJOR = 1;
export const VERSION_MINOR = 1;
/**
 * Highest minor version this writer produces: 1.2 marks a file whose image layout carries a residual layer
 * (RSDL chunks). Only such files are written as 1.2; every other file stays 1.1, byte for byte.
 */
const VERSION_MINOR_RESIDUAL = 2;
/**
 * 1.3: an image-layout file with a residual layer written by this version: its HEAD is the compact binary
 * header (./compact-header), its RSDL chunks use coefficient coder 2 (./coeff-coder) and its framing is
 * the compact one (./container-compact). The writer
 * produces 1.3 for every two-layer image; 1.2 files are still read.
 */
export const VERSION_MINOR_CODER2 = 3;
/** 1.4: a stack-layout file of stack version 3 (compact framing and header, coefficient coder 2; ./stack-header). */
const VERSION_MINOR_STACK3 = 4;
/** 1.5: a lossless image-layout file (compact framing and header, EXCT chunks of ./lossless-coder). */
export const VERSION_MINOR_LOSSLESS = 5;
/** Ancillary chunk of version ≥ 1.1 files: version copy and HEAD's CRC-32 (see the module comment). */
const FILE_CHECK = 'fchk';
const FILE_CHECK_LENGTH = 8;
const PREAMBLE = 12;
const CHUNK_OVERHEAD = 16;
const TRAILER = 16;
/** Largest chunk payload a reader accepts (1 GiB). */
const MAX_CHUNK = 2 ** 30;

export interface Chunk {
  type: string;
  id: number;
  payload: Uint8Array;
}

export interface ChunkEntry {
  type: string;
  id: number;
  /** Offset of the chunk's first byte (its type field). */
  offset: number;
  length: number;
}

function checkType(type: string): void {
  if (!/^[A-Za-z]{4}$/.test(type))
    throw new RangeError(`chunk type must be 4 ASCII letters, got ${JSON.stringify(type)}`);
}

function putU32(b: Uint8Array, o: number, v: number) {
  b[o] = (v >>> 24) & 0xff;
  b[o + 1] = (v >>> 16) & 0xff;
  b[o + 2] = (v >>> 8) & 0xff;
  b[o + 3] = v & 0xff;
}
function getU32(b: Uint8Array, o: number): number {
  return ((b[o] << 24) | (b[o + 1] << 16) | (b[o + 2] << 8) | b[o + 3]) >>> 0;
}

/** Magic and version: the first 12 bytes of every file. */
function preamble(minor: number): Uint8Array {
  const out = new Uint8Array(PREAMBLE);
  out.set(MAGIC, 0);
  out[8] = VERSION_MAJOR >> 8;
  out[9] = VERSION_MAJOR & 0xff;
  out[10] = minor >> 8;
  out[11] = minor & 0xff;
  return out;
}

/**
 * Assemble a file from chunks (HEAD first). Pure; the node layer writes it atomically. `minor` is the minor
 * version to record (default {@link VERSION_MINOR}; {@link VERSION_MINOR_CODER2} for two-layer images).
 */
export function writeContainer(layoutChunks: Chunk[], minor: number = VERSION_MINOR): Uint8Array {
  const minors = [VERSION_MINOR, VERSION_MINOR_RESIDUAL, VERSION_MINOR_CODER2, VERSION_MINOR_STACK3];
  if (![...minors, VERSION_MINOR_LOSSLESS].includes(minor))
    throw new RangeError(
      `this writer writes container version 1.${minors.join(', 1.')} or 1.${VERSION_MINOR_LOSSLESS}`,
    );
  if (!layoutChunks.length || layoutChunks[0].type !== 'HEAD')
    throw new RangeError('the first chunk must be HEAD');
  if (minor >= VERSION_MINOR_CODER2)
    return writeCompact(
      layoutChunks.filter((c) => c.type !== FILE_CHECK),
      preamble(minor),
    );
  // The file check is filled in below, once HEAD's CRC is known; it has a fixed size.
  const check: Chunk = { type: FILE_CHECK, id: 0, payload: new Uint8Array(FILE_CHECK_LENGTH) };
  // A file check among the chunks (a file being rewritten from its view) is replaced by a fresh one.
  const chunks = [...layoutChunks.filter((c) => c.type !== FILE_CHECK), check];
  const entries: ChunkEntry[] = [];
  let size = PREAMBLE;
  for (const c of chunks) {
    checkType(c.type);
    if (c.type === 'INDX') throw new RangeError(`chunk type ${c.type} is written by the container itself`);
    entries.push({ type: c.type, id: c.id, offset: size, length: c.payload.length });
    size += CHUNK_OVERHEAD + c.payload.length;
  }
  const index = new Uint8Array(4 + entries.length * 20);
  putU32(index, 0, entries.length);
  entries.forEach((e, k) => {
    const o = 4 + k * 20;
    for (let i = 0; i < 4; i++) index[o + i] = e.type.charCodeAt(i);
    putU32(index, o + 4, e.id >>> 0);
    putU32(index, o + 8, Math.floor(e.offset / 2 ** 32));
    putU32(index, o + 12, e.offset >>> 0);
    putU32(index, o + 16, e.length);
  });
  const indexOffset = size;
  size += CHUNK_OVERHEAD + index.length + TRAILER;
  const out = new Uint8Array(size);
  out.set(preamble(minor), 0);
  check.payload.set(out.subarray(8, 12), 0);
  let o = PREAMBLE;
  for (const c of [...chunks, { type: 'INDX', id: 0, payload: index }]) {
    for (let i = 0; i < 4; i++) out[o + i] = c.type.charCodeAt(i);
    putU32(out, o + 4, c.id >>> 0);
    putU32(out, o + 8, c.payload.length);
    if (c === check) putU32(check.payload, 4, getU32(out, PREAMBLE + 12 + chunks[0].payload.length));
    out.set(c.payload, o + 12);
    putU32(out, o + 12 + c.payload.length, crc32(out.subarray(o, o + 12 + c.payload.length)));
    o += CHUNK_OVERHEAD + c.payload.length;
  }
  out.set([0x52, 0x4b, 0x46, 0x49], o);
  putU32(out, o + 4, Math.floor(indexOffset / 2 ** 32));
  putU32(out, o + 8, indexOffset >>> 0);
  putU32(out, o + 12, crc32(out.subarray(o, o + 12)));
  return out;
}

export interface ContainerView {
  version: { major: number; minor: number };
  /** The indexed chunks in file order (HEAD first; the file check `fchk` of version ≥ 1.1 included). */
  entries: ChunkEntry[];
  /** Verified payload of the chunk at index k (CRC checked on first access). */
  payload(k: number): Uint8Array;
  find(type: string, id?: number): number;
}

const isTrailerMagic = (b: Uint8Array, t: number) =>
  b[t] === 0x52 && b[t + 1] === 0x4b && b[t + 2] === 0x46 && b[t + 3] === 0x49;

/** Offset of the chunk index named by a trailer at byte `t` whose magic and CRC-32 hold, else undefined. */
function trailerAt(bytes: Uint8Array, t: number): number | undefined {
  if (t < PREAMBLE + CHUNK_OVERHEAD || t + TRAILER > bytes.length || !isTrailerMagic(bytes, t))
    return undefined;
  if (crc32(bytes.subarray(t, t + 12)) !== getU32(bytes, t + 12)) return undefined;
  return getU32(bytes, t + 4) * 2 ** 32 + getU32(bytes, t + 8);
}

/**
 * Where a complete container ends when bytes were appended after it: p + 16 for the last trailer at p
 * (before the final 16 bytes) whose CRC holds and whose chunk index, with a matching CRC, ends exactly at p.
 * Only used to word the error, so the user knows where to cut; such a file is still refused.
 */
function completePrefix(bytes: Uint8Array): number | undefined {
  for (let p = bytes.length - TRAILER - 1; p >= PREAMBLE + CHUNK_OVERHEAD; p--) {
    p = bytes.lastIndexOf(0x52, p);
    if (p < PREAMBLE + CHUNK_OVERHEAD) return undefined;
    const io = trailerAt(bytes, p);
    if (io === undefined || io < PREAMBLE || io + CHUNK_OVERHEAD > p) continue;
    const len = getU32(bytes, io + 8);
    if (
      io + CHUNK_OVERHEAD + len === p &&
      String.fromCharCode(bytes[io], bytes[io + 1], bytes[io + 2], bytes[io + 3]) === 'INDX' &&
      crc32(bytes.subarray(io, io + 12 + len)) === getU32(bytes, io + 12 + len)
    )
      return p + TRAILER;
  }
  return undefined;
}

/**
 * Validate the preamble, trailer, index and file check of a container held in memory, and give checked
 * access to its chunks. Every chunk's CRC is verified when `verifyAll` (the default) is set; HEAD, INDX and
 * the file check always are. Layout readers then call {@link refuseUnknownCritical} with their chunk types.
 * @throws FormatError naming `file` and the problem.
 */
export function readContainer(bytes: Uint8Array, file: string, verifyAll = true): ContainerView {
  const fail = (problem: string): never => {
    throw new FormatError(file, problem);
  };
  if (bytes.length < PREAMBLE)
    fail(`is ${bytes.length} bytes long, too short to be a Rankfold .rkf file (truncated?)`);
  for (let i = 0; i < MAGIC.length; i++)
    if (bytes[i] !== MAGIC[i]) fail('is not a Rankfold .rkf file (the magic bytes do not match)');
  const major = (bytes[8] << 8) | bytes[9];
  const minor = (bytes[10] << 8) | bytes[11];
  const newer = `uses container version ${major}.${minor}, which this Rankfold does not read (it reads version ${VERSION_MAJOR}.x); use a newer Rankfold`;
  if (major !== VERSION_MAJOR) {
    // A version-1 file whose major version was damaged: its structure, and its file check, say so.
    const written = writtenVersion(bytes);
    if (written?.major === VERSION_MAJOR)
      fail(
        `is damaged: it declares container version ${major}.${minor}, but it was written as version ${written.major}.${written.minor}`,
      );
    fail(newer);
  }
  if (minor >= VERSION_MINOR_CODER2)
    try {
      return readCompact(bytes, fail);
    } catch (err) {
      // An indexed (1.0–1.2) file whose minor version was damaged: its file check says what it was.
      const written = writtenVersion(bytes);
      if (written && written.minor < VERSION_MINOR_CODER2)
        fail(
          `is damaged: it declares container version ${major}.${minor}, but it was written as version ${written.major}.${written.minor}`,
        );
      throw err;
    }
  return readVersion1(bytes, fail, verifyAll, true);
}

/** The version recorded in the file check of an otherwise valid version-1 file, if it has one. */
function writtenVersion(bytes: Uint8Array): { major: number; minor: number } | undefined {
  try {
    const view = readVersion1(
      bytes,
      (p) => {
        throw new Error(p);
      },
      false,
      false,
    );
    const k = view.find(FILE_CHECK);
    // A complete version-1 structure without a file check is what a 1.0 writer produced.
    if (k < 0) return { major: VERSION_MAJOR, minor: 0 };
    const p = view.payload(k);
    return { major: (p[0] << 8) | p[1], minor: (p[2] << 8) | p[3] };
  } catch {
    return undefined;
  }
}

/** Structure of a version-1 file; `checkVersion` false skips the file check (to read what it records). */
function readVersion1(
  bytes: Uint8Array,
  fail: (problem: string) => never,
  verifyAll: boolean,
  checkVersion: boolean,
): ContainerView {
  const major = (bytes[8] << 8) | bytes[9];
  const minor = (bytes[10] << 8) | bytes[11];
  if (bytes.length < PREAMBLE + CHUNK_OVERHEAD + TRAILER)
    fail('is truncated (shorter than the smallest valid file)');
  const t = bytes.length - TRAILER;
  const appendedOr = (problem: string): never => {
    const end = completePrefix(bytes);
    if (end !== undefined)
      fail(
        `has ${bytes.length - end} unexpected bytes after the end of its container at byte ${end} (appended data?); a copy of its first ${end} bytes may expand`,
      );
    return fail(problem);
  };
  const indexOffset = trailerAt(bytes, t);
  if (indexOffset === undefined)
    appendedOr(
      isTrailerMagic(bytes, t)
        ? 'is damaged: the trailer CRC-32 does not match'
        : 'is truncated or damaged: the trailer that locates the chunk index is missing',
    );
  const chunkAt = (offset: number, what: string) => {
    if (offset < PREAMBLE || offset + CHUNK_OVERHEAD > t) fail(`is damaged: ${what} lies outside the file`);
    const type = String.fromCharCode(bytes[offset], bytes[offset + 1], bytes[offset + 2], bytes[offset + 3]);
    const id = getU32(bytes, offset + 4);
    const length = getU32(bytes, offset + 8);
    if (length > MAX_CHUNK || offset + CHUNK_OVERHEAD + length > t)
      fail(`is truncated or damaged: ${what} (${type}) runs past the end`);
    return { type, id, offset, length };
  };
  const verify = (e: ChunkEntry) => {
    const end = e.offset + 12 + e.length;
    if (crc32(bytes.subarray(e.offset, end)) !== getU32(bytes, end))
      fail(`is damaged: chunk ${e.type} #${e.id} at byte ${e.offset} fails its CRC-32 check`);
  };
  const idx = chunkAt(indexOffset as number, 'the chunk index');
  if (idx.type !== 'INDX') fail('is damaged: the trailer does not point at the chunk index');
  // Nothing may lie between the index and the trailer: this is what catches data appended to a file.
  if (idx.offset + CHUNK_OVERHEAD + idx.length !== t)
    appendedOr('is damaged: there are unindexed bytes between the chunk index and the trailer');
  verify(idx);
  const ip = bytes.subarray(idx.offset + 12, idx.offset + 12 + idx.length);
  const count = idx.length >= 4 ? getU32(ip, 0) : -1;
  if (count < 1 || idx.length !== 4 + count * 20)
    fail('is damaged: the chunk index has an inconsistent length');
  const entries: ChunkEntry[] = [];
  let expected = PREAMBLE;
  for (let k = 0; k < count; k++) {
    const o = 4 + k * 20;
    const type = String.fromCharCode(ip[o], ip[o + 1], ip[o + 2], ip[o + 3]);
    const offset = getU32(ip, o + 8) * 2 ** 32 + getU32(ip, o + 12);
    const e = chunkAt(offset, `chunk ${k}`);
    if (
      e.type !== type ||
      e.id !== getU32(ip, o + 4) ||
      e.length !== getU32(ip, o + 16) ||
      offset !== expected
    )
      fail(`is damaged: chunk ${k} (${type}) does not match the chunk index`);
    entries.push(e);
    expected = offset + CHUNK_OVERHEAD + e.length;
  }
  if (expected !== idx.offset) fail('is damaged: there are unindexed bytes before the chunk index');
  if (entries[0].type !== 'HEAD') fail('is damaged: the first chunk is not the header (HEAD)');
  const verified = new Set<number>();
  const view: ContainerView = {
    version: { major, minor },
    entries,
    payload(k: number) {
      const e = entries[k];
      if (!verified.has(k)) {
        verify(e);
        verified.add(k);
      }
      return bytes.subarray(e.offset + 12, e.offset + 12 + e.length);
    },
    find(type: string, id?: number) {
      return entries.findIndex((e) => e.type === type && (id === undefined || e.id === id));
    },
  };
  view.payload(0);
  // The file check (version ≥ 1.1) covers the version field and binds the header to the file.
  const checks = entries.flatMap((e, k) => (e.type === FILE_CHECK ? [k] : []));
  if (checks.length > 1) fail(`is damaged: it has ${checks.length} file check chunks (${FILE_CHECK})`);
  if (!checkVersion) return view;
  if (checks.length === 0) {
    if (minor !== 0)
      fail(
        `is damaged: it declares container version ${major}.${minor}, but the file check chunk (${FILE_CHECK}) that files of version 1.1 and later carry is missing`,
      );
  } else {
    const fc = view.payload(checks[0]);
    if (fc.length < FILE_CHECK_LENGTH) fail(`is damaged: its file check chunk (${FILE_CHECK}) is too short`);
    const wMajor = (fc[0] << 8) | fc[1];
    const wMinor = (fc[2] << 8) | fc[3];
    if (wMajor !== major || wMinor !== minor)
      fail(
        `is damaged: it declares container version ${major}.${minor}, but it was written as version ${wMajor}.${wMinor}`,
      );
    if (getU32(fc, 4) !== getU32(bytes, PREAMBLE + 12 + entries[0].length))
      fail(
        `is damaged: its header (HEAD) is not the one the file was written with (the CRC-32 recorded in ${FILE_CHECK} differs)`,
      );
  }
  if (verifyAll) for (let k = 0; k < entries.length; k++) view.payload(k);
  return view;
}

/** PNG's convention (W3C PNG 3rd ed. §5.4): a chunk type whose first letter is upper case is critical. */
export const isCritical = (type: string) => type.charCodeAt(0) >= 0x41 && type.charCodeAt(0) <= 0x5a;

/**
 * Refuse a file holding a critical chunk type that the layout does not know (ancillary ones may be
 * skipped). One check for every layout; `known` lists the layout's own chunk types.
 * @throws FormatError naming `file` and the chunk type.
 */
export function refuseUnknownCritical(
  view: ContainerView,
  known: ReadonlySet<string>,
  file: string,
  layout: string,
): void {
  for (const e of view.entries)
    if (isCritical(e.type) && !known.has(e.type))
      throw new FormatError(
        file,
        `contains a critical chunk of type "${e.type}" that this Rankfold does not know in the ${layout} layout; use a newer Rankfold`,
      );
}
