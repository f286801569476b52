/**
 * The .rkf container: a preamble, then chunks each carrying its own CRC-32, then an index chunk and a
 * fixed trailer that points at the index, so a reader can reach any chunk without reading the others.
 * Layout (all integers big-endian; see docs/format.md):
 *
 *   preamble  8  magic 89 52 4B 46 0D 0A 1A 0A ("\x89RKF\r\n\x1a\n")
 *             2  major version (1), 2 minor version (0)
 *   chunk     4  type (ASCII letters; lower-case first letter = ancillary, may be skipped)
 *             4  id (plane, frame or other number, by type)
 *             4  payload length L
 *             L  payload
 *             4  CRC-32 of type, id, length and payload
 *   ...       the first chunk is always HEAD (UTF-8 JSON header)
 *   index     an INDX chunk: count, then per chunk: type, id, offset (u64 as 2×u32), length
 *   trailer  16  "RKFI", u32 offset of INDX high, u32 low, CRC-32 of the 12 bytes before it
 */
import { FormatError } from '../../contract/errors';
import { crc32 } from './crc32';

export const MAGIC = Uint8Array.from([0x89, 0x52, 0x4b, 0x46, 0x0d, 0x0a, 0x1a, 0x0a]);
export const VERSION_MAJOR = 1;
export const VERSION_MINOR = 0;
const PREAMBLE = 12;
const CHUNK_OVERHEAD = 16;
const TRAILER = 16;
/** Largest chunk payload a reader accepts (1 GiB). */
export const MAX_CHUNK = 2 ** 30;

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

/** Assemble a file from chunks (HEAD first). Pure; the node layer writes it atomically. */
export function writeContainer(chunks: Chunk[]): Uint8Array {
  if (!chunks.length || chunks[0].type !== 'HEAD') throw new RangeError('the first chunk must be HEAD');
  const entries: ChunkEntry[] = [];
  let size = PREAMBLE;
  for (const c of chunks) {
    checkType(c.type);
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
  out.set(MAGIC, 0);
  out[8] = VERSION_MAJOR >> 8;
  out[9] = VERSION_MAJOR & 0xff;
  out[10] = VERSION_MINOR >> 8;
  out[11] = VERSION_MINOR & 0xff;
  let o = PREAMBLE;
  for (const c of [...chunks, { type: 'INDX', id: 0, payload: index }]) {
    for (let i = 0; i < 4; i++) out[o + i] = c.type.charCodeAt(i);
    putU32(out, o + 4, c.id >>> 0);
    putU32(out, o + 8, c.payload.length);
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
  entries: ChunkEntry[];
  /** Verified payload of the chunk at index k (CRC checked on first access). */
  payload(k: number): Uint8Array;
  find(type: string, id?: number): number;
}

/**
 * Validate the preamble, trailer and index of a container held in memory, and give checked access
 * to its chunks. Every chunk's CRC is verified when `verifyAll` (the default) is set.
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
  if (major !== VERSION_MAJOR)
    fail(
      `uses container version ${major}.${minor}, which this Rankfold does not read (it reads version ${VERSION_MAJOR}.x); use a newer Rankfold`,
    );
  if (bytes.length < PREAMBLE + CHUNK_OVERHEAD + TRAILER)
    fail('is truncated (shorter than the smallest valid file)');
  const t = bytes.length - TRAILER;
  if (!(bytes[t] === 0x52 && bytes[t + 1] === 0x4b && bytes[t + 2] === 0x46 && bytes[t + 3] === 0x49))
    fail('is truncated or damaged: the trailer that locates the chunk index is missing');
  if (crc32(bytes.subarray(t, t + 12)) !== getU32(bytes, t + 12))
    fail('is damaged: the trailer CRC-32 does not match');
  const indexOffset = getU32(bytes, t + 4) * 2 ** 32 + getU32(bytes, t + 8);
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
  const idx = chunkAt(indexOffset, 'the chunk index');
  if (idx.type !== 'INDX') fail('is damaged: the trailer does not point at the chunk index');
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
  if (expected !== indexOffset) fail('is damaged: there are unindexed bytes before the chunk index');
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
  if (verifyAll) for (let k = 0; k < entries.length; k++) view.payload(k);
  return view;
}
