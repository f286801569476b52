// The compact framing of container 1.3 (container-compact.ts): chunk headers of type + two varints, one
// CRC-32 at the end. Every single-bit flip, every truncation and appended bytes must be refused with a
// FormatError naming the file; version 1.1 files keep the indexed framing.
import { describe, expect, it } from 'vitest';
import { FormatError } from '../../src-main/contract';
import { readContainer, writeContainer } from '../../src-main/engine/codec/container';
import { decodeImageFileSamples } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { COMPRESSORS } from '../../src-main/node/services/compress';

const NAME = 'small [1.3].rkf';

function small13(): Uint8Array {
  const w = 40;
  const h = 24;
  return encodeScan(
    {
      file: 'x.png',
      width: w,
      height: h,
      channels: 1,
      bitDepth: 8,
      colour: 'gray',
      hasAlpha: false,
      planes: [Float32Array.from({ length: w * h }, (_, i) => Math.round(120 + 80 * Math.sin(i / 7)))],
      meta: { format: 'png', density: 300, orientation: 1, pages: 1, page: 0 },
      inputBytes: 0,
      rawBytes: w * h,
      sourceSha256: '0'.repeat(64),
    } as Parameters<typeof encodeScan>[0],
    { budget: { kind: 'bpp', bpp: 2 }, tile: 'auto', compressors: COMPRESSORS, layers: 'auto' },
  ).bytes;
}

function refused(bytes: Uint8Array, what: string): string {
  try {
    decodeImageFileSamples(bytes, NAME, { compressors: COMPRESSORS });
  } catch (err) {
    expect(err, what).toBeInstanceOf(FormatError);
    expect((err as Error).message.startsWith(`${NAME}: `), what).toBe(true);
    return (err as Error).message;
  }
  throw new Error(`${what}: the damaged file was decoded`);
}

describe('container 1.3 compact framing', () => {
  const bytes = small13();
  const view = readContainer(bytes, NAME);

  it('is 1.3, with 7–9 bytes per chunk header and 16 bytes of preamble and CRC', () => {
    expect(view.version).toEqual({ major: 1, minor: 3 });
    expect(view.entries.map((e) => e.type)).toContain('RSDL');
    const payloads = view.entries.reduce((s, e) => s + e.length, 0);
    const framing = bytes.length - payloads;
    expect(framing).toBeLessThanOrEqual(16 + 9 * view.entries.length);
    expect(framing).toBeGreaterThanOrEqual(16 + 6 * view.entries.length);
    // Rewriting the chunks gives the same bytes.
    const chunks = view.entries.map((e, k) => ({ type: e.type, id: e.id, payload: view.payload(k) }));
    expect(writeContainer(chunks, 3)).toEqual(bytes);
  });

  it('refuses every single-bit flip', () => {
    for (let o = 0; o < bytes.length; o++)
      for (let bit = 0; bit < 8; bit++) {
        const b = bytes.slice();
        b[o] ^= 1 << bit;
        refused(b, `byte ${o} bit ${bit}`);
      }
  });

  it('refuses every truncation', () => {
    for (let n = 0; n < bytes.length; n++) refused(bytes.subarray(0, n), `first ${n} bytes`);
  });

  it('refuses appended bytes and names where the container ends', () => {
    for (const extra of [[0], [0x52, 0x4b, 0x46, 0x49], Array.from({ length: 40 }, (_, i) => i * 7)]) {
      const b = new Uint8Array(bytes.length + extra.length);
      b.set(bytes);
      b.set(extra, bytes.length);
      expect(refused(b, `+${extra.length}`)).toContain(`at byte ${bytes.length}`);
    }
  });
});
