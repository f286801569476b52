import { describe, expect, it } from 'vitest';
import { utf8Decode, utf8Encode } from '../../src-main/contract/utf8';

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
