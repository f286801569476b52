// The whole-scan encoder's decode of a grey scan as its integer samples (src-main/node/image/grey-samples.ts):
// the same values, hash and fields as decodeImage's float plane, on shared memory (the encoder's second thread
// reads it without a copy), 8-bit in a Uint8Array and 16-bit in a Uint16Array; a colour or alpha scan gets
// decodeImage's float planes; a truncated file the same one-sentence error.
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeImage, probeImage } from '../../src-main/node/image/decode';
import { decodeGreySamples } from '../../src-main/node/image/grey-samples';
import { buildPng } from './hostile-fixtures';

const fixture = (name: string) => join(__dirname, '..', 'fixtures', 'images', name);

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-grey-samples-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function both(file: string, prefault: boolean) {
  const probe = await probeImage(file);
  const f = await decodeImage(file);
  const s = await decodeGreySamples(file, { probe, prefault });
  return { f, s };
}

describe('decodeGreySamples', () => {
  it.each([
    ['camera.png', 8, Uint8Array, true],
    ['page.png', 8, Uint8Array, false],
    ['chessboard_GRAY_U16.tif', 16, Uint16Array, true],
  ] as const)(
    '%s: %i-bit integer samples on shared memory, equal to the float plane',
    async (name, bits, Kind, pre) => {
      const { f, s } = await both(fixture(name), pre);
      expect(f.bitDepth).toBe(bits);
      expect(s.planes).toHaveLength(1);
      const p = s.planes[0];
      expect(p).toBeInstanceOf(Kind);
      expect(p.buffer).toBeInstanceOf(SharedArrayBuffer);
      expect(Float32Array.from(p)).toEqual(f.planes[0]);
      const { planes: _a, ...sFields } = s;
      const { planes: _b, ...fFields } = f;
      expect(sFields).toEqual(fFields);
    },
  );

  it('a colour scan and a grey+alpha scan get the float planes', async () => {
    for (const name of ['horse.png', 'phantom.png']) {
      const { f, s } = await both(fixture(name), true);
      expect(s.planes.length).toBe(f.planes.length);
      s.planes.forEach((p, c) => {
        expect(p).toBeInstanceOf(Float32Array);
        expect(p).toEqual(f.planes[c]);
      });
      expect(s.sourceSha256).toBe(f.sourceSha256);
    }
  });

  it('a truncated PNG: the same one-sentence error as decodeImage', async () => {
    const w = 64;
    const h = 48;
    const raw = new Uint8Array(h * (1 + w));
    for (let y = 0, p = 0; y < h; y++) {
      raw[p++] = 0;
      for (let x = 0; x < w; x++) raw[p++] = (x * 5 + y * 3) % 256;
    }
    const whole = buildPng({ width: w, height: h, bitDepth: 8, colourType: 0, raw });
    const file = join(dir, 'cut.png');
    await writeFile(file, whole.subarray(0, Math.floor(whole.length * 0.7)));
    // Its header is whole: the probe reads it, and the decode fails.
    const probe = await probeImage(file);
    const a = await decodeImage(file).catch((e: Error) => e.message);
    expect(a).toMatch(/truncated or corrupt/);
    const b = await decodeGreySamples(file, { probe, prefault: true }).catch((e: Error) => e.message);
    expect(b).toBe(a);
  });
});
