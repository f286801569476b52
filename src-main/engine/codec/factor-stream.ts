/**
 * Serialise a QuantPlane as integers: per tile the rank and the mean (difference from the previous
 * tile), then per component the left and right vectors, each either as is or as first differences
 * (the encoder picks the smaller per vector with one flag). Two back ends read the same walk:
 * the context-modelled range coder ('rc') and zig-zag varints for a general-purpose compressor.
 */

import { type QuantPlane, type QuantTile, tileGrid } from './quantised';
import {
  decodeInt,
  decodeMagnitude,
  encodeInt,
  encodeMagnitude,
  IntModel,
  models,
  RangeDecoder,
  RangeEncoder,
} from './range-coder';

/** Context classes of vector entries: factor side (2) × component bucket (4) × previous magnitude (4). */
const ENTRY_CLASSES = 32;

function compBucket(i: number): number {
  return i === 0 ? 0 : i === 1 ? 1 : i < 4 ? 2 : 3;
}
function magClass(a: number): number {
  return a < 3 ? a : 3;
}
function sgn(v: number): number {
  return v > 0 ? 1 : v < 0 ? -1 : 0;
}

/** Choose delta coding for a vector when it lowers the sum of magnitudes (a proxy for bits). */
function useDelta(q: Int32Array): boolean {
  let direct = 0;
  let delta = 0;
  for (let j = 0; j < q.length; j++) {
    direct += Math.abs(q[j]);
    delta += Math.abs(q[j] - (j ? q[j - 1] : 0));
  }
  return delta < direct * 0.8;
}

interface Writer {
  rank(r: number, prev: number): void;
  mean(d: number): void;
  mode(side: number, delta: boolean): void;
  entry(v: number, cls: number, prevSign: number): void;
}

function walk(plane: QuantPlane, w: Writer): void {
  let prevRank = 0;
  let prevMean = 0;
  for (const t of plane.tiles) {
    const r = t.u.length;
    w.rank(r, prevRank);
    prevRank = r;
    if (plane.meanStep > 0) {
      w.mean(t.meanQ - prevMean);
      prevMean = t.meanQ;
    }
    for (let i = 0; i < r; i++)
      for (let side = 0; side < 2; side++) {
        const q = side === 0 ? t.u[i] : t.v[i];
        const delta = useDelta(q);
        w.mode(side, delta);
        writeVector(q, delta, (side * 4 + compBucket(i)) * 4, w);
      }
  }
}

// The per-vector loops are functions of their own (here and in unwalk) so V8 optimises them after a few
// calls instead of on-stack replacing the whole tile walk, which it recompiled several times per worker.
function writeVector(q: Int32Array, delta: boolean, base: number, w: Writer): void {
  let prev = 0;
  let prevSign = 0;
  for (let j = 0; j < q.length; j++) {
    const v = delta ? q[j] - (j ? q[j - 1] : 0) : q[j];
    w.entry(v, base + magClass(Math.abs(prev)), prevSign);
    prev = v;
    prevSign = sgn(v);
  }
}

class RcModels {
  rank = new IntModel(4);
  mean = new IntModel(1);
  mode = models(2);
  entry = new IntModel(ENTRY_CLASSES);
}

/** Entropy-code a plane with the adaptive range coder. */
export function encodePlaneRc(plane: QuantPlane): Uint8Array {
  const enc = new RangeEncoder();
  const m = new RcModels();
  walk(plane, {
    rank: (r, prev) => encodeMagnitude(enc, m.rank, r, Math.min(prev, 3)),
    mean: (d) => encodeInt(enc, m.mean, d, 0, 0),
    mode: (side, delta) => enc.encodeBit(m.mode[side], delta ? 1 : 0),
    entry: (v, cls, ps) => encodeInt(enc, m.entry, v, cls, ps),
  });
  return enc.finish();
}

/** Zig-zag LEB128 varints of the same walk, for a general-purpose compressor. */
export function serialisePlaneVarint(plane: QuantPlane): Uint8Array {
  let buf = new Uint8Array(1 << 14);
  let n = 0;
  const put = (x: number) => {
    if (n + 6 > buf.length) {
      const nb = new Uint8Array(buf.length * 2);
      nb.set(buf);
      buf = nb;
    }
    let z = x;
    while (z >= 0x80) {
      buf[n++] = (z % 0x80) | 0x80;
      z = Math.floor(z / 0x80);
    }
    buf[n++] = z;
  };
  const zz = (v: number) => (v >= 0 ? 2 * v : -2 * v - 1);
  walk(plane, {
    rank: (r) => put(r),
    mean: (d) => put(zz(d)),
    mode: (_s, delta) => put(delta ? 1 : 0),
    entry: (v) => put(zz(v)),
  });
  return buf.slice(0, n);
}

interface Reader {
  rank(prev: number): number;
  mean(): number;
  mode(side: number): boolean;
  entry(cls: number, prevSign: number): number;
  end(): void;
}

/** Rebuild a plane's quantised factors; `maxRank` bounds each tile by its own size. */
function unwalk(
  geom: { width: number; height: number; tile: number; step: number; meanStep: number },
  r: Reader,
): QuantPlane {
  const rects = tileGrid(geom.width, geom.height, geom.tile);
  const tiles: QuantTile[] = [];
  let prevRank = 0;
  let prevMean = 0;
  for (const rect of rects) {
    const rank = r.rank(prevRank);
    if (rank > Math.min(rect.w, rect.h))
      throw new RangeError(
        `tile at (${rect.x}, ${rect.y}) claims rank ${rank}, more than its size ${rect.w}×${rect.h} allows`,
      );
    prevRank = rank;
    let meanQ = 0;
    if (geom.meanStep > 0) {
      meanQ = prevMean + r.mean();
      prevMean = meanQ;
    }
    const u: Int32Array[] = [];
    const v: Int32Array[] = [];
    for (let i = 0; i < rank; i++)
      for (let side = 0; side < 2; side++) {
        const q = new Int32Array(side === 0 ? rect.h : rect.w);
        readVector(q, r.mode(side), (side * 4 + compBucket(i)) * 4, r);
        (side === 0 ? u : v).push(q);
      }
    tiles.push({ meanQ, u, v });
  }
  r.end();
  return { ...geom, tiles };
}

function readVector(q: Int32Array, delta: boolean, base: number, r: Reader): void {
  let prev = 0;
  let prevSign = 0;
  for (let j = 0; j < q.length; j++) {
    const val = r.entry(base + magClass(Math.abs(prev)), prevSign);
    q[j] = delta ? val + (j ? q[j - 1] : 0) : val;
    prev = val;
    prevSign = sgn(val);
  }
}

export function decodePlaneRc(
  bytes: Uint8Array,
  geom: { width: number; height: number; tile: number; step: number; meanStep: number },
): QuantPlane {
  const dec = new RangeDecoder(bytes);
  const m = new RcModels();
  return unwalk(geom, {
    rank: (prev) => decodeMagnitude(dec, m.rank, Math.min(prev, 3)),
    mean: () => decodeInt(dec, m.mean, 0, 0),
    mode: (side) => dec.decodeBit(m.mode[side]) === 1,
    entry: (cls, ps) => decodeInt(dec, m.entry, cls, ps),
    end: () => dec.checkEnd('the factor stream'),
  });
}

export function deserialisePlaneVarint(
  bytes: Uint8Array,
  geom: { width: number; height: number; tile: number; step: number; meanStep: number },
): QuantPlane {
  let p = 0;
  const get = () => {
    let x = 0;
    let mul = 1;
    for (;;) {
      if (p >= bytes.length) throw new RangeError('the factor stream ends early (truncated or corrupt)');
      const b = bytes[p++];
      x += (b & 0x7f) * mul;
      if (b < 0x80) break;
      mul *= 0x80;
      if (mul > 2 ** 35) throw new RangeError('corrupt varint in the factor stream');
    }
    return x;
  };
  const unzz = (z: number) => (z % 2 === 0 ? z / 2 : -(z + 1) / 2);
  return unwalk(geom, {
    rank: () => get(),
    mean: () => unzz(get()),
    mode: () => get() === 1,
    entry: () => unzz(get()),
    end: () => {
      if (p !== bytes.length)
        throw new RangeError(`the factor stream has ${bytes.length - p} unexpected trailing bytes`);
    },
  });
}
