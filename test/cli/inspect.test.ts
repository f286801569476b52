import { execFile } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { Matrix as MlMatrix, SVD as MlSVD } from 'ml-matrix';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { InspectReport } from '../../src-main/contract';
import { jacobiSingularValues } from '../../src-main/engine/linalg';
import { energyRank } from '../../src-main/engine/metrics';
import { encodeImageBuffer } from '../../src-main/node/image/encode';
import { lumaPlane, planeSpectrum } from '../../src-main/node/services/inspect';
import { image, reference, repoRoot } from '../helpers/fixtures';

// Runs the built CLI (`npm test` builds first): node bin/rankfold.mjs inspect …
const run = promisify(execFile);
const cli = join(repoRoot, 'bin', 'rankfold.mjs');
async function rankfold(...args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  try {
    const { stdout, stderr } = await run(process.execPath, [cli, ...args], {
      cwd: repoRoot,
      maxBuffer: 64 << 20,
    });
    return { code: 0, stdout, stderr };
  } catch (err) {
    const e = err as { code: number; stdout: string; stderr: string };
    return { code: e.code, stdout: e.stdout, stderr: e.stderr };
  }
}
async function inspectJson(...args: string[]): Promise<InspectReport> {
  const r = await rankfold('inspect', ...args, '--json');
  expect(r.stderr).toBe('');
  expect(r.code).toBe(0);
  return JSON.parse(r.stdout);
}

// Source: test/fixtures/reference/rank_approx_images.json — numpy 1.24.2 linalg.svd (LAPACK dgesdd).
type RankImage = {
  file: string;
  shape_rows_cols: [number, number];
  pixel_sum_of_squares: number;
  first_20_singular_values: number[];
  rank_k: { k: number; psnr_eckart_young_db: number; frobenius_error: number }[];
};
const rankRef = reference<{ images: RankImage[] }>('rank_approx_images.json');

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-inspect-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('rankfold inspect --json on the open test images', () => {
  for (const ref of rankRef.images)
    it(`${ref.file}: σ₁…σ₂₀, Eckart–Young errors and PSNR match LAPACK dgesdd via numpy 1.24.2`, async () => {
      const r = await inspectJson(image(ref.file));
      const [m, n] = ref.shape_rows_cols;
      expect([r.width, r.height, r.channels, r.bitDepth, r.plane, r.maxValue]).toEqual([
        n,
        m,
        1,
        8,
        'gray',
        255,
      ]);
      expect(r.singularValues).toHaveLength(Math.min(m, n)); // full spectrum: short side ≤ 2048
      expect(r.spectra[0].complete).toBe(true);
      const s1 = ref.first_20_singular_values[0];
      for (const [i, v] of ref.first_20_singular_values.entries())
        expect(Math.abs(r.singularValues[i] - v)).toBeLessThan(1e-9 * s1);
      for (let i = 1; i < r.singularValues.length; i++)
        expect(r.singularValues[i]).toBeLessThanOrEqual(r.singularValues[i - 1]);
      expect(r.spectra[0].energy).toBe(ref.pixel_sum_of_squares); // exact integer sum
      for (const e of r.spectra[0].errors) {
        const want = ref.rank_k.find((x) => x.k === e.k);
        if (!want) continue;
        expect(Math.abs(e.frobenius - want.frobenius_error) / want.frobenius_error).toBeLessThan(1e-7);
        expect(Math.abs((e.psnrDb ?? Number.POSITIVE_INFINITY) - want.psnr_eckart_young_db)).toBeLessThan(
          1e-5,
        );
      }
      for (const er of r.spectra[0].energyRanks) {
        // Independent check from the reference σ₁…σ₂₀ and Σx², where the rank is ≤ 20.
        let head = 0;
        let k = 0;
        while (k < 20 && head < er.fraction * ref.pixel_sum_of_squares)
          head += ref.first_20_singular_values[k++] ** 2;
        if (head >= er.fraction * ref.pixel_sum_of_squares) expect(er.rank).toBe(k);
        else expect(er.rank).toBeGreaterThan(20);
      }
    });

  it('chessboard_GRAY_U16.tif: 16-bit, PSNR on MAX = 65535', async () => {
    const r = await inspectJson(image('chessboard_GRAY_U16.tif'));
    expect([r.bitDepth, r.maxValue, r.channels]).toEqual([16, 65535, 1]);
    const e = r.spectra[0].errors[0];
    expect(e.psnrDb).toBeCloseTo(10 * Math.log10((65535 ** 2 * r.width * r.height) / e.frobenius ** 2), 9);
  });
});

describe('rankfold inspect on colour, pages and text output', () => {
  it('RGB: luma (BT.601 0.299/0.587/0.114) and per-channel spectra agree with ml-matrix 6.x SVD', async () => {
    const w = 40;
    const h = 30;
    const R = Float32Array.from({ length: w * h }, (_, i) => (i * 37) % 256);
    const G = Float32Array.from({ length: w * h }, (_, i) => ((i % w) * 5 + Math.floor(i / w) * 3) % 256);
    const B = Float32Array.from({ length: w * h }, (_, i) => (i * i) % 253);
    const file = join(dir, 'slide.png');
    await writeFile(
      file,
      await encodeImageBuffer(
        { width: w, height: h, channels: 3, bitDepth: 8, planes: [R, G, B] },
        { format: 'png' },
      ),
    );
    const r = await inspectJson(file);
    expect(r.colour).toBe('rgb');
    expect(r.spectra.map((s) => s.plane)).toEqual(['luma', 'red', 'green', 'blue']);
    const rows = (p: (i: number) => number) =>
      Array.from({ length: h }, (_, y) => Array.from({ length: w }, (_, x) => p(y * w + x)));
    const check = (got: number[], p: (i: number) => number) => {
      const want = new MlSVD(new MlMatrix(rows(p)), { autoTranspose: true }).diagonal;
      want.forEach((v, i) => {
        expect(Math.abs(got[i] - v)).toBeLessThan(1e-4 * want[0]);
      });
    };
    // Luma is formed in float32 from the exact weights, hence the 1e-4·σ₁ tolerance (f32 rounding of Y, ~1e-7 relative).
    check(r.singularValues, (i) => 0.299 * R[i] + 0.587 * G[i] + 0.114 * B[i]);
    check(r.spectra[1].singularValues, (i) => R[i]);
    check(r.spectra[3].singularValues, (i) => B[i]);
  });

  it('--page N reads that page of a multi-page TIFF', async () => {
    const w = 24;
    const h = 16;
    const px = Uint8Array.from({ length: w * h * 2 }, (_, i) => (i < w * h ? 10 : (i * 13) % 251));
    const file = join(dir, 'plates.tif');
    await writeFile(
      file,
      await sharp(px, { raw: { width: w, height: 2 * h, channels: 1, pageHeight: h } })
        .toColourspace('b-w')
        .tiff({ compression: 'lzw' })
        .toBuffer(),
    );
    const p0 = await inspectJson(file);
    const p1 = await inspectJson(file, '--page', '1');
    expect([p0.pages, p0.page, p1.page, p1.height]).toEqual([2, 0, 1, h]);
    // Page 0 is constant 10: rank 1 with σ₁ = 10·sqrt(w·h).
    expect(p0.singularValues[0]).toBeCloseTo(10 * Math.sqrt(w * h), 9);
    expect(p0.singularValues[1]).toBeLessThan(1e-9);
    expect(p1.singularValues[1]).toBeGreaterThan(1);
  });

  it('rank-1 and all-zero planes: the rank-1 error is ~0; exactly 0 gives PSNR null in JSON and ∞ in text', async () => {
    const w = 20;
    const h = 12;
    const write = async (name: string, v: number) => {
      const file = join(dir, name);
      const plane = new Float32Array(w * h).fill(v);
      await writeFile(
        file,
        await encodeImageBuffer(
          { width: w, height: h, channels: 1, bitDepth: 8, planes: [plane] },
          { format: 'png' },
        ),
      );
      return file;
    };
    const flat = await inspectJson(await write('flat.png', 77));
    expect(flat.singularValues[0]).toBeCloseTo(77 * Math.sqrt(w * h), 9); // rank 1: σ₁ = 77·sqrt(wh), the rest ≈ 0
    expect(flat.spectra[0].errors[0].frobenius).toBeLessThan(1e-12 * flat.singularValues[0]);
    const blackFile = await write('black.png', 0);
    const black = await inspectJson(blackFile);
    const e1 = black.spectra[0].errors[0];
    expect([e1.k, e1.frobenius, e1.psnrDb]).toEqual([1, 0, null]);
    expect(black.spectra[0].energyRanks.map((x) => x.rank)).toEqual([0, 0, 0]);
    const text = await rankfold('inspect', blackFile);
    expect(text.stdout).toMatch(/\n\s+1\s+0\s+0\s+0\s+∞ \(exact\)/);
  });

  it('works on a committed sample: samples/gel-scan.tif --page 1 (2-page TIFF, 1200×960, Gram route)', async () => {
    const r = await inspectJson(join(repoRoot, 'samples', 'gel-scan.tif'), '--page', '1');
    expect([r.width, r.height, r.pages, r.page, r.bitDepth, r.format]).toEqual([1200, 960, 2, 1, 8, 'tiff']);
    expect(r.spectra[0].method).toBe('gram');
    expect(r.singularValues).toHaveLength(960);
    // Σσ² = Σx² (Frobenius energy), to the Gram route's accuracy.
    const sumSq = r.singularValues.reduce((acc, v) => acc + v * v, 0);
    expect(Math.abs(sumSq - r.spectra[0].energy) / r.spectra[0].energy).toBeLessThan(1e-9);
  });

  it('text output lists size, spectrum, energy ranks and the Eckart–Young table', async () => {
    const r = await rankfold('inspect', image('camera.png'));
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('512 × 512 pixels');
    expect(r.stdout).toContain('8-bit');
    expect(r.stdout).toMatch(/σ1 70966/);
    expect(r.stdout).toMatch(/Energy Σσ² captured: 90 % by rank \d+, 99 % by rank \d+, 99.9 % by rank \d+/);
    expect(r.stdout).toMatch(/\n\s+1\s+17054\.\d\s+27423/); // k = 1: σ₂ and sqrt(Σ_{i>1}σᵢ²) (numpy: 27423.0…)
    const fullList = await rankfold('inspect', image('page.png'), '--full');
    expect(fullList.stdout).toContain('σ191 ');
  });
});

describe('rankfold inspect errors: stderr, non-zero exit, nothing on stdout', () => {
  const expectFailure = async (args: string[], message: string) => {
    const r = await rankfold('inspect', ...args);
    expect(r.code).not.toBe(0);
    expect(r.stdout).toBe('');
    expect(r.stderr).toContain(message);
  };

  it('0-byte file', async () => {
    const f = join(dir, 'empty.tif');
    await writeFile(f, '');
    await expectFailure([f, '--json'], `rankfold inspect: ${f}: is empty (0 bytes)`);
  });

  it('unreadable (not an image)', async () => {
    const f = join(dir, 'ledger.png');
    await writeFile(f, 'Harrowgate County Survey Office, ledger 3\n');
    await expectFailure([f], `${f}: is not an image Rankfold can read`);
  });

  it('unsupported format', async () => {
    const f = join(dir, 'anim.gif');
    await writeFile(
      f,
      await sharp(new Uint8Array(16), { raw: { width: 4, height: 4, channels: 1 } })
        .gif()
        .toBuffer(),
    );
    await expectFailure([f], `${f}: is in an unsupported format ("gif")`);
  });

  it('over the pixel limit, stating the limit', async () => {
    await expectFailure(
      [image('camera.png'), '--pixel-limit', '100000'],
      'is 512×512 = 262144 pixels, over the pixel limit of 100000 (sharp limitInputPixels); raise it with --pixel-limit',
    );
  });

  it('missing file, missing argument, bad option values', async () => {
    await expectFailure([join(dir, 'gone.png')], `${join(dir, 'gone.png')}: no such file`);
    await expectFailure([], 'inspect: no input file given');
    await expectFailure(
      [image('camera.png'), '--page', 'two'],
      'Expected integer between 0 and 100000 for page but received "two" of type string',
    );
    await expectFailure([image('camera.png'), '--page', '1'], 'has 1 page; page 1 does not exist');
  });
});

describe('inspect service: the top-values path used above 2048 pixels (tested here on a small plane with a small policy)', () => {
  it('top 20 by randomized SVD match the full one-sided Jacobi spectrum; tail errors use the exact Σx²', () => {
    const w = 150;
    const h = 120;
    const plane = new Float32Array(w * h);
    for (let y = 0; y < h; y++)
      for (let x = 0; x < w; x++)
        plane[y * w + x] =
          120 +
          50 * Math.sin(x / 9) * Math.cos(y / 13) +
          20 * Math.sin((x * y) / 400) +
          ((x * 31 + y * 17) % 11);
    const full = jacobiSingularValues({ rows: h, cols: w, data: Float64Array.from(plane) });
    const top = planeSpectrum(plane, w, h, 255, 'gray', { fullLimit: 50, topValues: 20 });
    expect(top.complete).toBe(false);
    expect(top.method).toBe('randomized');
    expect(top.singularValues).toHaveLength(20);
    for (let i = 0; i < 20; i++)
      expect(Math.abs(top.singularValues[i] - full[i])).toBeLessThan(1e-9 * full[0]);
    // Eckart–Young with the exact energy: sqrt(Σx² − Σ_{i≤k}σᵢ²) equals the full-spectrum tail.
    let tail10 = 0;
    for (let i = full.length - 1; i >= 10; i--) tail10 += full[i] ** 2;
    const e10 = top.errors.find((e) => e.k === 10)!;
    expect(Math.abs(e10.frobenius - Math.sqrt(tail10)) / Math.sqrt(tail10)).toBeLessThan(1e-4);
    // Energy ranks beyond the known values are null, those within agree with the full spectrum.
    for (const er of top.energyRanks) {
      const k = energyRank(full, er.fraction);
      if (k <= 20) expect(er.rank).toBe(k);
      else expect(er.rank).toBeNull();
    }
  });

  it('lumaPlane uses the BT.601 / JFIF 1.02 weights 0.299, 0.587, 0.114 (test/fixtures/reference/notes.md)', () => {
    const y = lumaPlane([255, 0, 0, 10], [0, 255, 0, 20], [0, 0, 255, 30]);
    expect(y[0]).toBeCloseTo(0.299 * 255, 4);
    expect(y[1]).toBeCloseTo(0.587 * 255, 4);
    expect(y[2]).toBeCloseTo(0.114 * 255, 4);
    expect(y[3]).toBeCloseTo(0.299 * 10 + 0.587 * 20 + 0.114 * 30, 5);
  });
});
