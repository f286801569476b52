/**
 * Lossless packing of the ICC profile of a container 1.3 image file (its ICCP chunk). Gray and small RGB
 * profiles are mostly a fixed header, a tag table, short texts and tone curves ('curv' tags of 16-bit
 * values, ICC.1:2010 §10.6), and at low rates the profile can be half the file. Packed form: the profile's
 * length (32 direct bits), then every byte on an adaptive binary tree (8 binary decisions, contexts from
 * the class of the previous byte), except the values of each 'curv' tag of 2 or more entries whose data
 * lies after the tag table, which are coded as second differences (signed integers) and so cost a few bits
 * each. The tag table is read from bytes already coded, so the decoder finds the same curves.
 * About 200 bytes for a 912-byte gray profile with a 256-entry curve (docs/format.md).
 */

import { FormatError } from '../../contract/errors';
import { type ContainerView, VERSION_MINOR_CODER2 } from './container';
import {
  type BitModel,
  decodeInt,
  encodeInt,
  IntModel,
  models,
  RangeDecoder,
  RangeEncoder,
} from './range-coder';

/** Largest profile accepted (bytes); bigger lengths in a packed stream mean damage. */
const MAX_ICC = 1 << 24;
const HEADER = 128;

const u32 = (b: Uint8Array, o: number) =>
  ((b[o] << 24) | (b[o + 1] << 16) | (b[o + 2] << 8) | b[o + 3]) >>> 0;

/** Curves (start of values, count) whose data lies entirely after the tag table, in tag-table order. */
function curves(b: Uint8Array, length: number): Map<number, number> {
  const at = new Map<number, number>();
  const n = u32(b, HEADER);
  const tableEnd = HEADER + 4 + 12 * n;
  for (let k = 0; k < n; k++) {
    const off = u32(b, HEADER + 4 + 12 * k + 4);
    const size = u32(b, HEADER + 4 + 12 * k + 8);
    if (off < tableEnd || off + 12 > length || size < 12 || off + size > length || at.has(off + 12)) continue;
    at.set(off + 12, size);
  }
  return at;
}

const byteClass = (v: number) => (v === 0 ? 0 : v < 0x20 ? 1 : v < 0x80 ? 2 : 3);

/** Code `b` (length `length`) in one direction; the encoder reads `b`, the decoder fills it. */
function code(
  b: Uint8Array,
  length: number,
  bit: (m: BitModel, v: number) => number,
  int: (m: IntModel, v: number, cls: number) => number,
): void {
  const tree = models(4 * 256);
  const im = new IntModel(4);
  let regions: Map<number, number> | undefined;
  const tableEnd = () => HEADER + 4 + 12 * u32(b, HEADER);
  let p = 0;
  while (p < length) {
    if (!regions && p >= HEADER + 4 && p >= tableEnd()) regions = curves(b, length);
    const size = regions?.get(p);
    // 'curv' (63 75 72 76), 4 reserved bytes, then the u32 count: all already coded when the values begin.
    const isCurv = size !== undefined && u32(b, p - 12) === 0x63757276;
    const count = isCurv ? u32(b, p - 4) : 0;
    if (isCurv && count >= 2 && 12 + 2 * count <= (size as number)) {
      let prev = 0;
      let prevD = 0;
      let lastD2 = 0;
      for (let i = 0; i < count; i++, p += 2) {
        // Linear extrapolation from the last two values; the coded difference is the second difference.
        const pred = i === 0 ? 0 : i === 1 ? prev : prev + prevD;
        const a = Math.abs(lastD2);
        const cls = i < 2 ? 3 : a === 0 ? 0 : a <= 4 ? 1 : 2;
        lastD2 = int(im, ((b[p] << 8) | b[p + 1]) - pred, cls);
        const v = pred + lastD2;
        if (v < 0 || v > 0xffff) throw new RangeError('corrupt ICC profile data (curve value)');
        b[p] = v >> 8;
        b[p + 1] = v & 0xff;
        if (i > 0) prevD = v - prev;
        prev = v;
      }
      continue;
    }
    const ctx = 256 * (p > 0 ? byteClass(b[p - 1]) : 0);
    let node = 1;
    for (let k = 7; k >= 0; k--) node = 2 * node + bit(tree[ctx + node], (b[p] >> k) & 1);
    b[p++] = node & 0xff;
  }
}

/** Pack an ICC profile (any bytes are accepted; a profile without a valid tag table just codes bytes). */
export function packIcc(icc: Uint8Array): Uint8Array {
  if (icc.length > MAX_ICC) throw new RangeError(`ICC profile of ${icc.length} bytes is over ${MAX_ICC}`);
  const enc = new RangeEncoder();
  for (let k = 31; k >= 0; k--) enc.encodeDirect((icc.length >>> k) & 1);
  code(
    icc.slice(),
    icc.length,
    (m, v) => {
      enc.encodeBit(m, v);
      return v;
    },
    (m, v, cls) => {
      encodeInt(enc, m, v, cls, 0);
      return v;
    },
  );
  return enc.finish();
}

/**
 * Unpack a profile written by {@link packIcc}.
 * @throws RangeError for a damaged or truncated stream
 */
export function unpackIcc(packed: Uint8Array): Uint8Array {
  const dec = new RangeDecoder(packed);
  let length = 0;
  for (let k = 0; k < 32; k++) length = length * 2 + dec.decodeDirect();
  if (length > MAX_ICC) throw new RangeError('corrupt ICC profile data (length)');
  const b = new Uint8Array(length);
  code(
    b,
    length,
    (m) => dec.decodeBit(m),
    (m, _v, cls) => decodeInt(dec, m, cls, 0),
  );
  dec.checkEnd('ICC profile data');
  return b;
}

/**
 * The ICC profile of an image file, if it has one: the ICCP payload as stored, unpacked in files of
 * container 1.3 and later.
 * @throws FormatError naming `file` when a packed profile is damaged
 */
export function storedIcc(view: ContainerView, file: string): Uint8Array | undefined {
  const k = view.find('ICCP');
  if (k < 0) return undefined;
  const payload = view.payload(k);
  if (view.version.minor < VERSION_MINOR_CODER2) return payload.slice();
  try {
    return unpackIcc(payload);
  } catch (err) {
    throw new FormatError(file, `the ICC profile cannot be decoded: ${(err as Error).message}`);
  }
}
