// The whole-scan encoder's decode of a scan without alpha as its integer samples
// (src-main/node/image/integer-samples.ts): the same values, hash and fields as decodeImage's float planes, on
// shared memory (the encoder's second thread reads them without a copy), 8-bit in Uint8Arrays and 16-bit in
// Uint16Arrays, one per channel; a scan with alpha gets decodeImage's float planes; a truncated file the same
// one-sentence error.
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeImage, probeImage } from '../../src-main/node/image/decode';
import { decodeIntegerSamples } from '../../src-main/node/image/integer-samples';
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
  const s = await decodeIntegerSamples(file, { probe, prefault });
  return { f, s };
}

/** A 37×23 grey+alpha PNG (colour type 4, 8 bits; W3C PNG 3rd ed. §11.2.1), rows with filter 0, built by hand. */
function greyAlphaPng(): Buffer {
  const [w, h] = [37, 23];
  const raw = new Uint8Array(h * (1 + 2 * w));
  for (let y = 0, p = 0; y < h; y++) {
    raw[p++] = 0;
    for (let x = 0; x < w; x++) {
      raw[p++] = (x * 7 + y) % 256;
      raw[p++] = 255 - ((x * 3) % 256);
    }
  }
  return buildPng({ width: w, height: h, bitDepth: 8, colourType: 4, raw });
}

describe('decodeIntegerSamples', () => {
  it.each([
    ['camera.png', 8, 1, Uint8Array, true],
    ['page.png', 8, 1, Uint8Array, false],
    ['chessboard_GRAY_U16.tif', 16, 1, Uint16Array, true],
    ['phantom.png', 8, 3, Uint8Array, true],
  ] as const)(
    '%s: %i-bit integer samples, %i plane(s) on shared memory, equal to the float planes',
    async (name, bits, channels, Kind, pre) => {
      const { f, s } = await both(fixture(name), pre);
      expect(f.bitDepth).toBe(bits);
      expect(f.planes).toHaveLength(channels);
      expect(s.planes).toHaveLength(channels);
      s.planes.forEach((p, c) => {
        expect(p).toBeInstanceOf(Kind);
        expect(p.buffer).toBeInstanceOf(SharedArrayBuffer);
        expect(Float32Array.from(p)).toEqual(f.planes[c]);
      });
      const { planes: _a, ...sFields } = s;
      const { planes: _b, ...fFields } = f;
      expect(sFields).toEqual(fFields);
    },
  );

  it('a scan with alpha (RGBA, and grey+alpha) gets the float planes', async () => {
    const ga = join(dir, 'ga.png');
    await writeFile(ga, greyAlphaPng());
    for (const file of [fixture('horse.png'), ga]) {
      const { f, s } = await both(file, true);
      expect(f.hasAlpha).toBe(true);
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
    const b = await decodeIntegerSamples(file, { probe, prefault: true }).catch((e: Error) => e.message);
    expect(b).toBe(a);
  });
});
