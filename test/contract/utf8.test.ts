import { describe, expect, it } from 'vitest';
import { utf8Decode, utf8Encode } from '../../src-main/contract/utf8';
import { Rng } from '../../src-main/engine/linalg/random';

// Reference: Node 20's WHATWG TextEncoder/TextDecoder (Encoding Standard, UTF-8 per RFC 3629).
describe('contract utf8', () => {
  const samples = [
    '',
    'plain ascii',
    'Harrowgate ledger · 1887',
    'Ünïcödé ñ',
    '地図 シート',
    'emoji 🗺️📜',
    '\u0000\u007f\u0080\u07ff\u0800\uffff',
  ];
  it.each(samples)('encodes %j exactly as TextEncoder', (s) => {
    expect(Array.from(utf8Encode(s))).toEqual(Array.from(new TextEncoder().encode(s)));
  });
  it.each(samples)('decodes %j back', (s) => {
    expect(utf8Decode(new TextEncoder().encode(s))).toBe(s);
  });
});

// Malformed input: each case against Node's TextDecoder (WHATWG Encoding Standard §4, one U+FFFD per maximal
// subpart, Unicode 15 §3.9), and with `fatal` a throw, as TextDecoder({ fatal: true }) throws.
describe('contract utf8: malformed bytes', () => {
  const cases: [string, number[], string][] = [
    ['stray continuation byte', [0x61, 0x80, 0x62], 'a\ufffdb'],
    ['two stray continuation bytes', [0xbf, 0xbf], '\ufffd\ufffd'],
    ['truncated 2-byte sequence at the end', [0x61, 0xc3], 'a\ufffd'],
    ['truncated 3-byte sequence before ASCII', [0xe6, 0x9d, 0x41], '\ufffdA'],
    ['truncated 4-byte sequence at the end', [0xf0, 0x9f, 0x97], '\ufffd'],
    ['overlong "/" (C0 AF)', [0xc0, 0xaf], '\ufffd\ufffd'],
    ['overlong ".." (C0 AE C0 AE)', [0xc0, 0xae, 0xc0, 0xae], '\ufffd\ufffd\ufffd\ufffd'],
    ['overlong 3-byte NUL (E0 80 80)', [0xe0, 0x80, 0x80], '\ufffd\ufffd\ufffd'],
    ['encoded surrogate U+D800 (ED A0 80)', [0xed, 0xa0, 0x80], '\ufffd\ufffd\ufffd'],
    ['above U+10FFFF (F4 90 80 80)', [0xf4, 0x90, 0x80, 0x80], '\ufffd\ufffd\ufffd\ufffd'],
    ['F5 and FF never start a sequence', [0xf5, 0xff, 0x41], '\ufffd\ufffdA'],
    ['lead byte followed by a lead byte', [0xe2, 0xe2, 0x82, 0xac], '\ufffd€'],
  ];
  it.each(cases)('%s', (_label, bytes, expected) => {
    const b = Uint8Array.from(bytes);
    expect(utf8Decode(b)).toBe(expected);
    expect(utf8Decode(b)).toBe(new TextDecoder().decode(b));
    expect(() => utf8Decode(b, { fatal: true })).toThrow(/^malformed UTF-8 at byte \d+$/);
  });
  it('agrees with TextDecoder on 2000 seeded random byte strings biased to non-ASCII', () => {
    const rng = new Rng(12345);
    const next = (): number => rng.uniform();
    for (let n = 0; n < 2000; n++) {
      const b = Uint8Array.from({ length: Math.floor(next() * 12) }, () =>
        next() < 0.2 ? Math.floor(next() * 0x80) : 0x80 + Math.floor(next() * 0x80),
      );
      expect(utf8Decode(b), Array.from(b).join(' ')).toBe(new TextDecoder().decode(b));
    }
  });
  it('encodes a lone surrogate as U+FFFD, as TextEncoder does', () => {
    expect(Array.from(utf8Encode('a\ud800b'))).toEqual(Array.from(new TextEncoder().encode('a\ud800b')));
  });
});
