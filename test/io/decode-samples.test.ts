// The integer-sample reader of large scans and the float reader share one pipeline (decodeInterleaved):
// the same samples, hash, metadata, warnings and error sentences, for the cases where the two used to
// differ (8-bit grey+alpha read through sRGB, a truncated file, a resolution left out with a warning).
// PNG facts: W3C PNG 3rd ed. §11.2.1 IHDR colour type 4 = grey+alpha; §11.3.5.3 pHYs.
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeImage } from '../../src-main/node/image/decode';
import { decodeSamples } from '../../src-main/node/image/raw-decode';
import { buildPng, physChunk, replacePngChunk } from './hostile-fixtures';

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-samples-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** A 37×23 grey+alpha PNG (colour type 4, 8 bits), rows with filter 0, built by hand. */
function greyAlphaPng(): Buffer {
  const w = 37;
  const h = 23;
  const raw = new Uint8Array(h * (1 + 2 * w));
  for (let y = 0, p = 0; y < h; y++) {
    raw[p++] = 0;
    for (let x = 0; x < w; x++) {
      const i = y * w + x;
      raw[p++] = (i * 7) % 256;
      raw[p++] = 255 - ((i * 3) % 256);
    }
  }
  return buildPng({ width: w, height: h, bitDepth: 8, colourType: 4, raw });
}

describe('decodeSamples and decodeImage agree', () => {
  it('8-bit grey+alpha: the same two planes and the same SHA-256', async () => {
    const file = join(dir, 'ga.png');
    await writeFile(file, greyAlphaPng());
    const f = await decodeImage(file);
    const s = await decodeSamples(file);
    expect([s.channels, f.channels]).toEqual([2, 2]);
    expect(s.sourceSha256).toBe(f.sourceSha256);
    for (let c = 0; c < 2; c++) expect(Array.from(s.planes[c])).toEqual(Array.from(f.planes[c]));
  });

  it('a truncated PNG gets the same one-sentence error from both', async () => {
    const file = join(dir, 'cut.png');
    const whole = greyAlphaPng();
    await writeFile(file, whole.subarray(0, Math.floor(whole.length * 0.7)));
    const a = await decodeImage(file).catch((e: Error) => e.message);
    const b = await decodeSamples(file).catch((e: Error) => e.message);
    expect(a).toMatch(/truncated or corrupt/);
    expect(b).toBe(a);
  });

  it('an out-of-range resolution is left out with the same warning by both', async () => {
    const file = join(dir, 'phys.png');
    await writeFile(file, replacePngChunk(greyAlphaPng(), 'pHYs', physChunk(0xffffffff, 0xffffffff, 1)));
    const f = await decodeImage(file);
    const s = await decodeSamples(file);
    expect(s.meta.density).toBeUndefined();
    expect(s.warnings).toEqual(f.warnings);
    expect(s.warnings?.length).toBe(1);
  });
});
