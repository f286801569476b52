// Container 1.3 (docs/format.md): the compact binary HEAD, the packed ICC profile, coefficient coder 2 for the
// residual; container 1.2 and 1.3 files written before (test/fixtures/rkf/expected-v1.2.json, expected-v1.3.json)
// still decode to the same samples; damaged 1.3 files are refused.
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FormatError } from '../../src-main/contract';
import { decodeCompactHeader, encodeCompactHeader } from '../../src-main/engine/codec/compact-header';
import { readContainer, writeContainer } from '../../src-main/engine/codec/container';
import { packIcc, unpackIcc } from '../../src-main/engine/codec/icc-pack';
import { readImageHeader } from '../../src-main/engine/codec/image-file';
import { decodeImageFileSamples } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { fixture } from '../helpers/fixtures';

const header = {
  format: 'rankfold',
  layout: 'image',
  width: 96,
  height: 80,
  bitDepth: 8,
  channels: 1,
  colourTransform: 'none',
  alpha: 'none',
  quantiser: { kind: 'uniform-dead-zone', weighting: 'sigma', deadZone: 0.2 },
  planes: [{ name: 'gray', tile: 0, step: 1, meanStep: 0, entropy: 'rc', residualStep: 261.574 }],
  sourceSha256: '667bfd85aab58052ae90251fae1a265cf8be6d1097b1e61dcfc183b65887a1fe',
  lossless: false,
  metadata: { format: 'png', density: 72, page: 0, pages: 1, icc: true },
  encoder: 'rankfold 0.1.0',
} as const;

describe('compact header', () => {
  it('gives back what JSON would, in under a third of the bytes', () => {
    const b = encodeCompactHeader(header);
    expect(decodeCompactHeader(b)).toEqual(JSON.parse(JSON.stringify(header)));
    expect(b.length * 3).toBeLessThan(JSON.stringify(header).length);
  });

  it('round-trips odd values as JSON.parse(JSON.stringify(v)) does', () => {
    const v = {
      neg: -12,
      big: 2 ** 52 + 2,
      frac: -0.1,
      zero: -0,
      nan: Number.NaN,
      und: undefined,
      text: 'Zürich “quoted” \u0001 \\ "',
      upper: 'ABCDEF0123456789ABCDEF0123456789ABCDEF0123456789ABCDEF0123456789',
      list: [1, null, 'x', [true, false], { a: 1 }],
    };
    expect(decodeCompactHeader(encodeCompactHeader(v))).toEqual(JSON.parse(JSON.stringify(v)));
    const proto = decodeCompactHeader(encodeCompactHeader(JSON.parse('{"__proto__": {"x": 1}}'))) as object;
    expect(Object.getPrototypeOf(proto)).toBe(Object.prototype);
    expect(Object.keys(proto)).toEqual(['__proto__']);
  });

  it('refuses every truncation, trailing bytes and unknown tags', () => {
    const b = encodeCompactHeader(header);
    for (let n = 0; n < b.length; n++)
      expect(() => decodeCompactHeader(b.subarray(0, n))).toThrow(SyntaxError);
    expect(() => decodeCompactHeader(Uint8Array.from([...b, 0]))).toThrow(SyntaxError);
    expect(() => decodeCompactHeader(Uint8Array.of(10))).toThrow(SyntaxError);
    expect(() => decodeCompactHeader(Uint8Array.of(127))).toThrow(SyntaxError);
  });
});

/** A gray profile shaped like page.png's (header, tag table, text, XYZ, a 256-entry curve). */
function grayProfile(): Uint8Array {
  const b = new Uint8Array(128 + 4 + 3 * 12 + 40 + 20 + 12 + 512);
  const dv = new DataView(b.buffer);
  dv.setUint32(0, b.length);
  b.set(
    [...'ADBEprtrGRAYXYZ '].map((c) => c.charCodeAt(0)),
    4,
  );
  dv.setUint32(128, 3);
  const tags: Array<[string, number, number]> = [
    ['cprt', 168, 40],
    ['wtpt', 208, 20],
    ['kTRC', 228, 12 + 512],
  ];
  tags.forEach(([sig, off, size], k) => {
    b.set(
      [...sig].map((c) => c.charCodeAt(0)),
      132 + 12 * k,
    );
    dv.setUint32(136 + 12 * k, off);
    dv.setUint32(140 + 12 * k, size);
  });
  b.set(
    [...'text\0\0\0\0Copyright nobody, test data'].map((c) => c.charCodeAt(0)),
    168,
  );
  b.set(
    [...'XYZ '].map((c) => c.charCodeAt(0)),
    208,
  );
  b.set(
    [...'curv'].map((c) => c.charCodeAt(0)),
    228,
  );
  dv.setUint32(236, 256);
  for (let i = 0; i < 256; i++) dv.setUint16(240 + 2 * i, Math.round(65535 * (i / 255) ** 2.2));
  return b;
}

describe('packed ICC profile', () => {
  it('round-trips a profile with a tone curve at a fraction of its size', () => {
    const icc = grayProfile();
    const p = packIcc(icc);
    expect(Array.from(unpackIcc(p))).toEqual(Array.from(icc));
    expect(p.length * 3).toBeLessThan(icc.length);
  });

  it('round-trips bytes that are not a profile, and refuses truncations', () => {
    const rnd = Array.from({ length: 300 }, (_, i) => (i * 2654435761) >>> 24);
    for (const b of [new Uint8Array(0), Uint8Array.from(rnd), grayProfile().subarray(0, 140)])
      expect(Array.from(unpackIcc(packIcc(b)))).toEqual(Array.from(b));
    const p = packIcc(grayProfile());
    for (let n = 0; n < p.length; n++) expect(() => unpackIcc(p.subarray(0, n))).toThrow(RangeError);
  });
});

describe('container 1.3 image files', () => {
  const icc = grayProfile();
  const file = () =>
    encodeScan(
      {
        file: 'x.png',
        width: 96,
        height: 80,
        channels: 1,
        bitDepth: 8,
        colour: 'gray',
        hasAlpha: false,
        planes: [Float32Array.from({ length: 96 * 80 }, (_, i) => Math.round(120 + 80 * Math.sin(i / 37)))],
        meta: { format: 'png', density: 300, orientation: 1, pages: 1, page: 0, icc },
        inputBytes: 0,
        rawBytes: 96 * 80,
        sourceSha256: '0'.repeat(64),
      } as Parameters<typeof encodeScan>[0],
      { budget: { kind: 'bpp', bpp: 1 }, tile: 'auto', compressors: COMPRESSORS, layers: 'auto' },
    ).bytes;

  it('are written as 1.3 with a compact HEAD and a packed ICC profile that read back as written', () => {
    const bytes = file();
    expect(readContainer(bytes, 'x.rkf').version).toEqual({ major: 1, minor: 3 });
    const { header: h } = readImageHeader(bytes, 'x.rkf');
    expect(h.planes[0].residualStep).toBeGreaterThan(0);
    expect(h.metadata.icc).toBe(true);
    expect(bytes.length).toBeLessThan(icc.length + 96 * 10);
    expect(Array.from(decodeImageFileSamples(bytes, 'x.rkf').icc as Uint8Array)).toEqual(Array.from(icc));
  });

  it('refuse a damaged packed ICC profile with a FormatError, even with every CRC rewritten', () => {
    const v = readContainer(file(), 'x.rkf');
    const chunks = v.entries.map((e, k) => ({ type: e.type, id: e.id, payload: v.payload(k).slice() }));
    const k = chunks.findIndex((c) => c.type === 'ICCP');
    chunks[k].payload = chunks[k].payload.subarray(0, chunks[k].payload.length - 3);
    expect(() => decodeImageFileSamples(writeContainer(chunks, 3), 'x.rkf')).toThrow(FormatError);
  });

  it('are refused with a FormatError when HEAD is JSON under version 1.3', () => {
    const v = readContainer(file(), 'x.rkf');
    const chunks = v.entries.map((e, k) => ({ type: e.type, id: e.id, payload: v.payload(k).slice() }));
    chunks[0].payload = Uint8Array.from(JSON.stringify(header), (c) => c.charCodeAt(0));
    expect(() => readImageHeader(writeContainer(chunks, 3), 'x.rkf')).toThrow(FormatError);
  });
});

describe.each([
  { minor: 2, what: 'container 1.2 files (coefficient coder 1)' },
  { minor: 3, what: 'container 1.3 files (coefficient coder 2, written at d9c26f4)' },
])('$what decode as they did', ({ minor }) => {
  const expected = JSON.parse(readFileSync(fixture('rkf', `expected-v1.${minor}.json`), 'utf8'));
  it.each([`v1.${minor}-gray8-96x80.rkf`, `v1.${minor}-rgb8-96x80.rkf`])('%s', (name) => {
    const bytes = new Uint8Array(readFileSync(fixture('rkf', name)));
    expect(readContainer(bytes, name).version).toEqual({ major: 1, minor });
    expect(readImageHeader(bytes, name).header.planes.some((p) => (p.residualStep ?? 0) > 0)).toBe(true);
    const d = decodeImageFileSamples(bytes, name);
    const h = createHash('sha256');
    for (const s of d.samples) h.update(Buffer.from(s.buffer, s.byteOffset, s.byteLength));
    expect(h.digest('hex')).toBe(expected[name].samplesSha256);
  });
});
