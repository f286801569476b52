// The source hash the container records (src-main/node/image/decode.ts hashSamples, hashInterleaved) is
// formed a chunk of 2^20 pixels at a time: it must equal the SHA-256 (node:crypto) of the whole interleaved
// buffer, 16-bit big-endian, built in one piece here, also for sizes that end mid-chunk.
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { hashInterleaved, hashSamples } from '../../src-main/node/image/decode';

/** Pixels per hashing chunk in decode.ts. */
const CHUNK = 1 << 20;

function wholeHash(planes: Uint16Array[], bitDepth: 8 | 16): string {
  const n = planes[0].length;
  const ch = planes.length;
  const buf = Buffer.alloc(n * ch * (bitDepth / 8));
  for (let i = 0; i < n; i++)
    for (let c = 0; c < ch; c++)
      if (bitDepth === 16) buf.writeUInt16BE(planes[c][i], 2 * (i * ch + c));
      else buf[i * ch + c] = planes[c][i];
  return createHash('sha256').update(buf).digest('hex');
}

function planesOf(n: number, ch: number, max: number): Uint16Array[] {
  return Array.from({ length: ch }, (_, c) =>
    Uint16Array.from({ length: n }, (_, i) => (i * 7919 + c * 104729) % (max + 1)),
  );
}

describe('source hash, a chunk at a time', () => {
  it.each([
    [1, 1, 8],
    [CHUNK + 3, 2, 16],
    [CHUNK + 5, 3, 8],
    [2 * CHUNK, 1, 16],
  ] as Array<[number, number, 8 | 16]>)(
    '%i pixels × %i channels, %i-bit: the whole buffer’s SHA-256',
    (n, ch, bits) => {
      const planes = planesOf(n, ch, bits === 16 ? 65535 : 255);
      const want = wholeHash(planes, bits);
      expect(hashSamples(planes, bits)).toBe(want);
      // sharp's interleaved output: native-endian words (16-bit) or bytes (8-bit).
      const inter = bits === 16 ? new Uint16Array(n * ch) : new Uint8Array(n * ch);
      for (let i = 0; i < n; i++) for (let c = 0; c < ch; c++) inter[i * ch + c] = planes[c][i];
      expect(hashInterleaved(inter)).toBe(want);
    },
  );
});
