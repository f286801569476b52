// Byte budgets of two-layer files (container 1.3, compact framing) are met on disk at 0.1, 0.25, 0.5 and 1
// bpp for every test image, and a rank-0 base (residual only) decodes to what the encoder reported.
import { readdirSync } from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import { readContainer } from '../../src-main/engine/codec/container';
import { initEngine } from '../../src-main/engine/linalg';
import { decodeImageFileSamples } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { decodeImage } from '../../src-main/node/image/decode';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { fixture, image } from '../helpers/fixtures';

beforeAll(async () => {
  await initEngine();
});

const names = readdirSync(fixture('images')).filter((f) => /\.(png|tif)$/.test(f));

describe('two-layer budgets on disk', () => {
  for (const name of names)
    it(`${name}: at most bpp·pixels/8 bytes at 0.1, 0.25, 0.5 and 1 bpp`, async () => {
      const img = await decodeImage(image(name));
      for (const bpp of [0.1, 0.25, 0.5, 1]) {
        const r = encodeScan(img, {
          budget: { kind: 'bpp', bpp },
          tile: 'auto',
          compressors: COMPRESSORS,
          layers: 'auto',
        });
        expect(r.bytes.length, `${name} ${bpp}`).toBeLessThanOrEqual(
          Math.floor((bpp * img.width * img.height) / 8),
        );
        if (r.layers.chosen === 'residual-only') {
          // A rank-0 base: a 1.3 file whose base is empty, and it decodes to the samples the encoder reported.
          expect(readContainer(r.bytes, 'x.rkf').version.minor).toBe(3);
          expect(r.ranks.every((p) => p.ranks.every((k) => k === 0))).toBe(true);
          const d = decodeImageFileSamples(r.bytes, 'x.rkf', { compressors: COMPRESSORS });
          expect(Array.from(d.samples[0].subarray(0, 64))).toEqual(
            Array.from(r.decoded.samples[0].subarray(0, 64)),
          );
        }
      }
    }, 120_000);
});
