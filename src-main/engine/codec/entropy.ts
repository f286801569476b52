/**
 * Entropy back ends for the factor streams. 'rc' is our own adaptive range coder (pure, always
 * present). General-purpose compressors ('brotli', 'deflate') are passed in by the caller as functions,
 * so the engine stays free of Node: the container writer and reader take them as arguments.
 */
import { decodePlaneRc, deserialisePlaneVarint, encodePlaneRc, serialisePlaneVarint } from './factor-stream';
import type { QuantPlane } from './quantised';

export interface ByteCompressor {
  /** Name recorded in the header, e.g. 'brotli'. */
  id: string;
  compress(bytes: Uint8Array): Uint8Array;
  /** Inverse of compress; must refuse to produce more than `maxLength` bytes. */
  decompress(bytes: Uint8Array, maxLength: number): Uint8Array;
}

export type EntropyId = 'rc' | string;

export type PlaneGeometry = { width: number; height: number; tile: number; step: number; meanStep: number };

export function encodePlane(
  plane: QuantPlane,
  entropy: EntropyId,
  compressors: ByteCompressor[] = [],
): Uint8Array {
  if (entropy === 'rc') return encodePlaneRc(plane);
  const c = compressors.find((x) => x.id === entropy);
  if (!c) throw new RangeError(`no compressor "${entropy}" was provided`);
  return c.compress(serialisePlaneVarint(plane));
}

/** Upper bound of a varint stream's length for a plane (each tile's full rank at 6 bytes per value). */
function varintBound(g: PlaneGeometry): number {
  return Math.min(2 ** 30, 64 + 6 * (g.width * g.height * 2 + 4 * g.width + 4 * g.height) * 4);
}

export function decodePlane(
  bytes: Uint8Array,
  g: PlaneGeometry,
  entropy: EntropyId,
  compressors: ByteCompressor[] = [],
): QuantPlane {
  if (entropy === 'rc') return decodePlaneRc(bytes, g);
  const c = compressors.find((x) => x.id === entropy);
  if (!c) throw new RangeError(`it needs the "${entropy}" decompressor, which this reader was not given`);
  return deserialisePlaneVarint(c.decompress(bytes, varintBound(g)), g);
}
