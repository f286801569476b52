// Files written as container version 1.0 (test/fixtures/rkf, see SOURCES.md) still decode bit-identically
// after the move to version 1.1, in both layouts; written again, they become 1.1 files with the same samples.
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { readContainer, writeContainer } from '../../src-main/engine/codec/container';
import { decodeImageFile } from '../../src-main/engine/lowrank/decode-image';
import { openStack } from '../../src-main/engine/lowrank/stack-frames';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { fixture } from '../helpers/fixtures';

interface Expected {
  fileSha256: string;
  bitDepth?: 8 | 16;
  samplesSha256?: string;
  framesSha256?: string[];
}
const expected: Record<string, Expected> = JSON.parse(readFileSync(fixture('rkf', 'expected.json'), 'utf8'));

/** SHA-256 of samples interleaved in channel order, 8-bit as bytes, 16-bit big-endian (docs/format.md). */
function samplesSha(planes: ArrayLike<number>[], bitDepth: 8 | 16): string {
  const n = planes[0].length;
  const buf = Buffer.alloc(n * planes.length * (bitDepth / 8));
  let p = 0;
  for (let i = 0; i < n; i++)
    for (const plane of planes) {
      if (bitDepth === 16) p = buf.writeUInt16BE(plane[i], p);
      else buf[p++] = plane[i];
    }
  return createHash('sha256').update(buf).digest('hex');
}

const read = (name: string) => new Uint8Array(readFileSync(fixture('rkf', name)));
const rewritten = (bytes: Uint8Array) => {
  const v = readContainer(bytes, 'old.rkf');
  return writeContainer(v.entries.map((e, k) => ({ type: e.type, id: e.id, payload: v.payload(k) })));
};

describe.each(Object.keys(expected).filter((n) => !n.includes('stack')))('image fixture %s', (name) => {
  const e = expected[name];
  it('is the stored version-1.0 file', () => {
    const bytes = read(name);
    expect(createHash('sha256').update(bytes).digest('hex')).toBe(e.fileSha256);
    expect(readContainer(bytes, name).version).toEqual({ major: 1, minor: 0 });
  });
  it('decodes to the recorded samples, and so does its version-1.1 rewrite', () => {
    for (const bytes of [read(name), rewritten(read(name))]) {
      const d = decodeImageFile(bytes, name, { compressors: COMPRESSORS });
      expect(samplesSha(d.samples, d.bitDepth)).toBe(e.samplesSha256);
    }
    expect(readContainer(rewritten(read(name)), name).version).toEqual({ major: 1, minor: 1 });
  });
});

describe.each(Object.keys(expected).filter((n) => n.includes('stack')))('stack fixture %s', (name) => {
  const e = expected[name];
  it('decodes every frame to the recorded samples, and so does its version-1.1 rewrite', () => {
    const bytes = read(name);
    expect(createHash('sha256').update(bytes).digest('hex')).toBe(e.fileSha256);
    for (const b of [bytes, rewritten(bytes)]) {
      const r = openStack(b, name);
      r.verify();
      const got = Array.from({ length: r.header.frameCount }, (_, j) =>
        samplesSha(r.frame(j), r.header.bitDepth),
      );
      expect(got).toEqual(e.framesSha256);
    }
  });
});

// Stack layout version 2 (container 1.1, coefficient coder 1), written at main d9c26f4 (test/fixtures/rkf/stack-v2,
// see SOURCES.md): still read, every frame to the same samples, after version 3 (coder 2) became the writer's.
const v2: Record<string, Expected & { ranks: number[] }> = JSON.parse(
  readFileSync(fixture('rkf', 'stack-v2', 'expected.json'), 'utf8'),
);
describe.each(Object.keys(v2))('stack version 2 fixture %s', (name) => {
  it('decodes every frame, in any order, to the samples recorded when it was written', () => {
    const bytes = new Uint8Array(readFileSync(fixture('rkf', 'stack-v2', name)));
    expect(createHash('sha256').update(bytes).digest('hex')).toBe(v2[name].fileSha256);
    expect(readContainer(bytes, name).version).toEqual({ major: 1, minor: 1 });
    const r = openStack(bytes, name);
    expect(r.header.stackVersion).toBe(2);
    expect(r.header.ranks).toEqual(v2[name].ranks);
    const order = Array.from({ length: r.header.frameCount }, (_, j) => r.header.frameCount - 1 - j);
    const got: string[] = [];
    for (const j of order) got[j] = samplesSha(r.frame(j), r.header.bitDepth);
    expect(got).toEqual(v2[name].framesSha256);
  });
});
