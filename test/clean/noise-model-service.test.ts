// The Poisson–Gaussian path end to end through the clean service and the CLI: 1 worker = 2 workers
// (bit-identical), 16-bit and colour inputs, the report's fitted model and the --profile CSV rows.
// Workers run from the built dist/workers/clean.js (`npm test` builds first).
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { main } from '../../src-main/node/cli/main';
import { cleanDecoded } from '../../src-main/node/services/clean';
import { fixtureGray, type Gray, poissonGaussian, psnr } from './helpers';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-noise-model-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function decoded(g: Gray, planes: Float32Array[], bitDepth: 8 | 16 = 8): DecodedImage {
  return {
    file: 'synthetic.png',
    width: g.width,
    height: g.height,
    channels: planes.length as 1 | 3,
    bitDepth,
    colour: planes.length === 3 ? 'rgb' : 'gray',
    hasAlpha: false,
    planes,
    meta: { format: 'png' },
    inputBytes: 0,
    rawBytes: g.width * g.height * planes.length,
    sourceSha256: '',
  } as DecodedImage;
}

describe('clean with the Poisson–Gaussian model', () => {
  it('1 and 2 workers give bit-identical output, and the report gives a and b', async () => {
    const img = await fixtureGray('camera.png', { x: 64, y: 64, w: 256, h: 256 });
    const noisy = poissonGaussian(img, 0.6, 4, 31);
    const outs = [];
    for (const workers of [1, 2]) {
      const r = await cleanDecoded(decoded(img, [noisy]), { noise: 'auto', banding: 'off', workers });
      expect(r.report.noiseModel?.model).toBe('poisson-gaussian');
      expect(r.report.noiseModel?.planes[0].points.length).toBeGreaterThan(3);
      outs.push(Buffer.from(r.planes[0].buffer));
    }
    expect(outs[0].equals(outs[1])).toBe(true);
  });

  it('16-bit: the scan ×257 with a ×257, b ×257² is fitted (a within 15 %) and cleaned (gain above 2 dB)', async () => {
    const img = await fixtureGray('camera.png', { x: 64, y: 64, w: 256, h: 256 });
    const truth16 = { ...img, data: img.data.map((v) => v * 257) };
    const noisy16 = poissonGaussian(truth16, 0.6 * 257, 4 * 257 * 257, 32, 65535);
    const r = await cleanDecoded(decoded(img, [noisy16], 16), { noise: 'auto', banding: 'off', workers: 0 });
    const m = r.report.noiseModel;
    expect(m?.model).toBe('poisson-gaussian');
    expect(Math.abs((m?.a ?? 0) / (0.6 * 257) - 1)).toBeLessThan(0.15);
    const gain = psnr(r.planes[0], truth16.data, 65535) - psnr(noisy16, truth16.data, 65535);
    expect(gain).toBeGreaterThan(2);
  });

  it('colour: each channel gets its own fit, and cleaning gains', async () => {
    const img = await fixtureGray('camera.png', { x: 64, y: 64, w: 192, h: 192 });
    const truth = [img.data, img.data.map((v) => 0.8 * v + 20), img.data.map((v) => 255 - v)];
    const noisy = truth.map((d, c) => poissonGaussian({ ...img, data: d }, 0.5, 4, 40 + c));
    const r = await cleanDecoded(decoded(img, noisy), { noise: 'auto', banding: 'off', workers: 0 });
    expect(r.report.noiseModel?.planes.map((p) => p.plane)).toEqual(['R', 'G', 'B']);
    for (let c = 0; c < 3; c++) expect(psnr(r.planes[c], truth[c])).toBeGreaterThan(psnr(noisy[c], truth[c]));
  });

  it('CLI: --noise A,B is used as given, and --profile writes the noise-model rows', async () => {
    const img = await fixtureGray('camera.png', { x: 64, y: 64, w: 128, h: 128 });
    const noisy = poissonGaussian(img, 0.6, 4, 33);
    const src = join(dir, 'pg.png');
    await sharp(Buffer.from(Uint8Array.from(noisy)), { raw: { width: 128, height: 128, channels: 1 } })
      .png()
      .toFile(src);
    let stdout = '';
    const io = { stdout: (t: string) => (stdout += t), stderr: () => {}, isTTY: false };
    const csv = join(dir, 'fit.csv');
    const code = await main(
      ['clean', src, '-o', join(dir, 'out.png'), '--noise', '0.6,4', '--profile', csv, '--json'],
      io,
    );
    expect(code).toBe(0);
    const rep = JSON.parse(stdout);
    expect(rep.noiseModel).toMatchObject({ model: 'poisson-gaussian', source: 'given', a: 0.6, b: 4 });
    expect(rep.noiseSource).toBe('given');
    const text = readFileSync(csv, 'utf8');
    expect(text).toContain('noise-a,0,0.600000');
    expect(text).toContain('noise-b,0,4.00000');
    let err = '';
    const bad = await main(['clean', src, '-o', join(dir, 'x.png'), '--noise', '0.6,'], {
      stdout: () => {},
      stderr: (t) => (err += t),
      isTTY: false,
    });
    expect(bad).toBe(1);
    expect(err).toMatch(/for noise/);
  });
});
