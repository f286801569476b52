/**
 * The compact framing of container version ≥ 1.3 (two-layer image files, which are often a few hundred
 * bytes): after the 12-byte preamble each chunk is
 *
 *   4  type (ASCII letters, as in 1.1), varint id, varint payload length L, L bytes payload
 *
 * and the file ends with one CRC-32 (ISO-HDLC, as PNG) of every byte before it, preamble included. There is
 * no per-chunk CRC, no file check chunk, no index and no trailer: 7–9 bytes per chunk instead of 36, and 4
 * bytes at the end instead of 60. One CRC-32 over the file still detects every error burst of up to 32 bits
 * (so every single-bit flip) and covers the version field (W3C PNG 2nd ed. Annex D; common practice). A
 * reader finds a chunk by stepping over the chunk headers. Varints are LEB128 (7 bits per byte, low first),
 * at most 5 bytes, with no redundant trailing zero byte.
 */
import type { Chunk, ChunkEntry, ContainerView } from './container';
import { crc32 } from './crc32';

const PREAMBLE = 12;
const CRC = 4;
const MAX_CHUNK = 2 ** 30;

function varint(out: number[], n: number): void {
  let v = n;
  while (v >= 128) {
    out.push((v % 128) | 128);
    v = Math.floor(v / 128);
  }
  out.push(v);
}

/** A compact file: `preamble` (magic and version), then the chunks (HEAD first), then the CRC-32. */
export function writeCompact(chunks: Chunk[], preamble: Uint8Array): Uint8Array {
  const heads = chunks.map((c) => {
    if (!/^[A-Za-z]{4}$/.test(c.type) || c.type === 'INDX')
      throw new RangeError(`chunk type ${JSON.stringify(c.type)} cannot be written`);
    const h = Array.from(c.type, (ch) => ch.charCodeAt(0));
    varint(h, c.id >>> 0);
    varint(h, c.payload.length);
    return h;
  });
  let size = PREAMBLE + CRC;
  chunks.forEach((c, k) => {
    size += heads[k].length + c.payload.length;
  });
  const out = new Uint8Array(size);
  out.set(preamble, 0);
  let o = PREAMBLE;
  chunks.forEach((c, k) => {
    out.set(heads[k], o);
    out.set(c.payload, o + heads[k].length);
    o += heads[k].length + c.payload.length;
  });
  new DataView(out.buffer).setUint32(o, crc32(out.subarray(0, o)));
  return out;
}

interface Parsed {
  entries: ChunkEntry[];
  starts: number[];
}

/**
 * Step over the chunk headers from byte 12 up to `end`; undefined when they do not end exactly there.
 * `atBoundary(o)` is called at every chunk boundary (to find where a complete file ends).
 */
function parseChunks(
  bytes: Uint8Array,
  end: number,
  atBoundary?: (o: number) => boolean,
): Parsed | undefined {
  const entries: ChunkEntry[] = [];
  const starts: number[] = [];
  let o = PREAMBLE;
  const readVarint = (): number | undefined => {
    let v = 0;
    let scale = 1;
    for (let i = 0; i < 5 && o < end; i++) {
      const b = bytes[o++];
      v += (b & 127) * scale;
      if (b < 128) return i > 0 && b === 0 ? undefined : v;
      scale *= 128;
    }
    return undefined;
  };
  while (o < end) {
    if (atBoundary?.(o)) return undefined;
    const offset = o;
    if (o + 4 > end) return undefined;
    const type = String.fromCharCode(bytes[o], bytes[o + 1], bytes[o + 2], bytes[o + 3]);
    if (!/^[A-Za-z]{4}$/.test(type)) return undefined;
    o += 4;
    const id = readVarint();
    const length = readVarint();
    if (id === undefined || id >= 2 ** 32 || length === undefined || length > MAX_CHUNK) return undefined;
    if (o + length > end) return undefined;
    entries.push({ type, id, offset, length });
    starts.push(o);
    o += length;
  }
  return { entries, starts };
}

const crcAt = (bytes: Uint8Array, o: number) => new DataView(bytes.buffer, bytes.byteOffset).getUint32(o);

/**
 * Validate a compact file (version ≥ 1.3) and give access to its chunks.
 * @throws via `fail` (a FormatError naming the file) on any damage.
 */
export function readCompact(bytes: Uint8Array, fail: (problem: string) => never): ContainerView {
  if (bytes.length < PREAMBLE + CRC) fail('is truncated (shorter than the smallest valid file)');
  const end = bytes.length - CRC;
  if (crc32(bytes.subarray(0, end)) !== crcAt(bytes, end)) {
    // Appended bytes: a chunk boundary at which the bytes before it are a complete file.
    let complete: number | undefined;
    parseChunks(bytes, bytes.length, (o) => {
      if (o + CRC < bytes.length && crc32(bytes.subarray(0, o)) === crcAt(bytes, o)) complete = o + CRC;
      return complete !== undefined;
    });
    if (complete !== undefined)
      fail(
        `has ${bytes.length - complete} unexpected bytes after the end of its container at byte ${complete} (appended data?); a copy of its first ${complete} bytes may expand`,
      );
    fail('is truncated or damaged: the CRC-32 at the end of the file does not match');
  }
  const parsed = parseChunks(bytes, end);
  if (!parsed) return fail('is damaged: its chunks do not end where the file check begins');
  const { entries, starts } = parsed;
  if (!entries.length || entries[0].type !== 'HEAD')
    fail('is damaged: the first chunk is not the header (HEAD)');
  return {
    version: { major: (bytes[8] << 8) | bytes[9], minor: (bytes[10] << 8) | bytes[11] },
    entries,
    payload: (k: number) => bytes.subarray(starts[k], starts[k] + entries[k].length),
    find: (type: string, id?: number) =>
      entries.findIndex((e) => e.type === type && (id === undefined || e.id === id)),
  };
}
