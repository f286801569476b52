/**
 * Binary factor sets: σ, U, V of every plane plus the source planes, sent once per scan to the page, which
 * rebuilds any rank from them itself. Layout: u32 magic, u32 header length, UTF-8 JSON header, blocks.
 */
import type { StackFrameInfo } from './api';
import { UsageError } from './errors';
import { utf8Decode, utf8Encode } from './utf8';

/** One typed-array block in a factor set. */
interface BlockInfo {
  name: string;
  type: 'f32' | 'u8' | 'u16';
  length: number;
  /** Byte offset from the start of the data area (after the header), 8-aligned. */
  offset: number;
}

/** Header of a factor set. Per plane `p`: blocks `sigma.p` (k), `u.p` (k·height, vector i contiguous), `v.p` (k·width), `src.p`. */
export interface FactorSetHeader {
  width: number;
  height: number;
  channels: string[];
  /** Rank stored per plane. */
  ranks: number[];
  /** ‖A‖_F² per plane, so the tail energy is known for every k ≤ rank. */
  energy: number[];
  /** Peak value of the source scale (255 or 65535). */
  peak: number;
  /** True when the stored rank is the full rank min(width, height). */
  complete: boolean;
  /** Full spectra when computed (`spectrum.p` blocks). */
  blocks: BlockInfo[];
  /** Set when the planes are one frame of a stack file. */
  stack?: StackFrameInfo;
}

export type FactorArrays = Record<string, Float32Array | Uint8Array | Uint16Array>;

const MAGIC = 0x52464b31; // 'RFK1'

/** Pack a header and typed arrays: u32 magic, u32 header length, UTF-8 JSON header, pad to 8, blocks (8-aligned). */
export function encodeFactorSet(header: Omit<FactorSetHeader, 'blocks'>, arrays: FactorArrays): Uint8Array {
  const blocks: BlockInfo[] = [];
  let off = 0;
  for (const [name, a] of Object.entries(arrays)) {
    const type = a instanceof Float32Array ? 'f32' : a instanceof Uint16Array ? 'u16' : 'u8';
    blocks.push({ name, type, length: a.length, offset: off });
    off += Math.ceil(a.byteLength / 8) * 8;
  }
  const json = utf8Encode(JSON.stringify({ ...header, blocks }));
  const headLen = 8 + Math.ceil(json.length / 8) * 8;
  const out = new Uint8Array(headLen + off);
  const dv = new DataView(out.buffer);
  dv.setUint32(0, MAGIC, true);
  dv.setUint32(4, json.length, true);
  out.set(json, 8);
  for (const b of blocks) {
    const a = arrays[b.name];
    out.set(new Uint8Array(a.buffer, a.byteOffset, a.byteLength), headLen + b.offset);
  }
  return out;
}

/** Unpack {@link encodeFactorSet} output without copying the blocks. @throws UsageError on a malformed set. */
export function decodeFactorSet(buf: ArrayBuffer): { header: FactorSetHeader; arrays: FactorArrays } {
  if (buf.byteLength < 8) throw new UsageError('factor set is truncated (under 8 bytes)');
  const dv = new DataView(buf);
  if (dv.getUint32(0, true) !== MAGIC) throw new UsageError('factor set has a wrong magic number');
  const len = dv.getUint32(4, true);
  if (8 + len > buf.byteLength) throw new UsageError('factor set header is truncated');
  const header = JSON.parse(utf8Decode(new Uint8Array(buf, 8, len))) as FactorSetHeader;
  const headLen = 8 + Math.ceil(len / 8) * 8;
  const arrays: FactorArrays = {};
  for (const b of header.blocks) {
    const size = b.type === 'f32' ? 4 : b.type === 'u16' ? 2 : 1;
    if (headLen + b.offset + b.length * size > buf.byteLength)
      throw new UsageError(`factor set block ${b.name} is truncated`);
    const Ctor = b.type === 'f32' ? Float32Array : b.type === 'u16' ? Uint16Array : Uint8Array;
    arrays[b.name] = new Ctor(buf, headLen + b.offset, b.length);
  }
  return { header, arrays };
}
