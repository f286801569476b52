// The .rkf container: CRC-32 check value, chunk round trip, and clean FormatErrors for damaged files.
import { describe, expect, it } from 'vitest';
import { FormatError } from '../../src-main/contract';
import { readContainer, writeContainer } from '../../src-main/engine/codec/container';
import { crc32 } from '../../src-main/engine/codec/crc32';

const ascii = (s: string) => Uint8Array.from(s, (c) => c.charCodeAt(0));

describe('crc32', () => {
  it('matches the published check value', () => {
    // Check value of CRC-32/ISO-HDLC for "123456789" is 0xCBF43926 (W3C PNG 2nd ed. Annex D; common practice).
    expect(crc32(ascii('123456789'))).toBe(0xcbf43926);
    // Empty input → 0 (same CRC definition).
    expect(crc32(new Uint8Array(0))).toBe(0);
  });
  it('agrees with node:zlib crc32 on random bytes', async () => {
    // Independent implementation: Node 20.15+ zlib.crc32 (zlib's own).
    const zlib = (await import('node:zlib')) as unknown as { crc32?: (b: Uint8Array) => number };
    const b = new Uint8Array(1000).map((_, i) => (i * 7919 + 13) & 0xff);
    if (zlib.crc32) expect(crc32(b)).toBe(zlib.crc32(b));
    else expect(crc32(b)).toBeGreaterThanOrEqual(0);
  });
});

describe('container', () => {
  const file = () =>
    writeContainer([
      { type: 'HEAD', id: 0, payload: ascii('{"format":"rankfold"}') },
      { type: 'PLNE', id: 0, payload: Uint8Array.from([1, 2, 3, 4, 5]) },
      { type: 'PLNE', id: 1, payload: new Uint8Array(0) },
    ]);

  it('round-trips chunks and gives random access through the index', () => {
    const v = readContainer(file(), 'x.rkf');
    expect(v.version).toEqual({ major: 1, minor: 0 });
    expect(v.entries.map((e) => `${e.type}#${e.id}`)).toEqual(['HEAD#0', 'PLNE#0', 'PLNE#1']);
    expect(Array.from(v.payload(v.find('PLNE', 0)))).toEqual([1, 2, 3, 4, 5]);
    expect(v.payload(v.find('PLNE', 1)).length).toBe(0);
  });

  it('refuses every truncation with a FormatError naming the file', () => {
    const b = file();
    for (let n = 0; n < b.length; n++) {
      let err: unknown;
      try {
        readContainer(b.subarray(0, n), 'cut.rkf');
      } catch (e) {
        err = e;
      }
      expect(err, `truncated to ${n} bytes`).toBeInstanceOf(FormatError);
      expect((err as Error).message).toMatch(/^cut\.rkf: /);
    }
  });

  it('detects any single flipped bit in a chunk (CRC-32) or the preamble', () => {
    const b = file();
    let caught = 0;
    for (let i = 0; i < b.length; i++) {
      if (i === 10 || i === 11) continue; // the minor version may change without breaking readers (docs/format.md)
      const c = b.slice();
      c[i] ^= 0x10;
      try {
        readContainer(c, 'bad.rkf');
      } catch (e) {
        expect(e).toBeInstanceOf(FormatError);
        caught++;
      }
    }
    // Every other byte is covered by the magic, the major version, a chunk CRC or the trailer CRC.
    expect(caught).toBe(b.length - 2);
  });

  it('names the unknown version', () => {
    const b = file();
    b[9] = 7;
    expect(() => readContainer(b, 'v.rkf')).toThrow(/container version 7\.0/);
  });

  it('says when a file is not a container', () => {
    expect(() => readContainer(ascii('hello, this is not a rankfold file at all'), 'n.rkf')).toThrow(
      /not a Rankfold \.rkf file/,
    );
  });
});
