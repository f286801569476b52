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
    // package.json requires Node ≥ 20.19, so zlib.crc32 is always there: no fallback branch that cannot fail.
    const zlib = (await import('node:zlib')) as unknown as { crc32: (b: Uint8Array) => number };
    const b = new Uint8Array(1000).map((_, i) => (i * 7919 + 13) & 0xff);
    expect(typeof zlib.crc32).toBe('function');
    expect(crc32(b)).toBe(zlib.crc32(b));
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
    expect(v.version).toEqual({ major: 1, minor: 1 });
    expect(v.entries.map((e) => `${e.type}#${e.id}`)).toEqual(['HEAD#0', 'PLNE#0', 'PLNE#1', 'fchk#0']);
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

  it('detects any single flipped bit anywhere, the version field included', () => {
    const b = file();
    let caught = 0;
    for (let i = 0; i < b.length; i++)
      for (let bit = 0; bit < 8; bit++) {
        const c = b.slice();
        c[i] ^= 1 << bit;
        try {
          readContainer(c, 'bad.rkf');
        } catch (e) {
          expect(e).toBeInstanceOf(FormatError);
          caught++;
        }
      }
    // The magic, the version (copied into the file check chunk fchk), the chunk and index CRCs and the trailer CRC.
    expect(caught).toBe(b.length * 8);
  });

  it('names the unknown version, and a damaged one', () => {
    const b = file();
    b[9] = 7;
    expect(() => readContainer(b, 'v.rkf')).toThrow(
      /v\.rkf: is damaged: it declares container version 7\.1, but it was written as version 1\.1$/,
    );
    // A file of another major version without a file check recording version 1 (a newer format).
    const newer = file().slice(0, 12);
    newer[9] = 2;
    expect(() => readContainer(newer, 'n.rkf')).toThrow(
      /container version 2\.1, which this Rankfold does not read/,
    );
  });

  it('rewrites the file check when a file is written again from its chunks', () => {
    const v = readContainer(file(), 'x.rkf');
    const again = writeContainer(
      v.entries.map((e, k) => ({ type: e.type, id: e.id, payload: v.payload(k) })),
    );
    expect(Buffer.from(again).equals(Buffer.from(file()))).toBe(true);
  });

  it('says when a file is not a container', () => {
    expect(() => readContainer(ascii('hello, this is not a rankfold file at all'), 'n.rkf')).toThrow(
      /not a Rankfold \.rkf file/,
    );
  });
});
