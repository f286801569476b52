// Stack mode's per-frame work on two threads (src-main/node/services/stack-threads.ts): the file and the
// report's figures are bit-identical with 1 and 2 threads, and the frames the encoder rebuilds for its
// quality figures are, sample for sample, the frames the reader decodes from the file.
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { driftingSpecimen, formPages } from '../../bench/models/synthetic';
import { fitStack } from '../../src-main/engine/codec/stack-budget';
import type { StackInput } from '../../src-main/engine/codec/stack-header';
import { measureFrames } from '../../src-main/engine/codec/stack-quality';
import { measureStackFile, openStack, prepareStack } from '../../src-main/engine/lowrank/stack-frames';
import { compressStackFile } from '../../src-main/node/services/stack';
import { StackThreads } from '../../src-main/node/services/stack-threads';

const W = 96;
const H = 80;
const N = 10;
const series = driftingSpecimen({
  width: W,
  height: H,
  frames: N,
  seed: 5,
  noise: 1.5,
  texture: 40,
  drift: 0.5,
});
const input: StackInput = {
  width: W,
  height: H,
  bitDepth: 8,
  channels: 1,
  frames: series.frames.map((p, j) => ({ planes: [Float32Array.from(p, Math.round)], name: `f${j}` })),
};
/** Forms: pages that share little, so the encoder keeps per-frame residuals. */
const pages = formPages({ width: 64, height: 72, frames: 12, seed: 21 });
const forms: StackInput = {
  width: 64,
  height: 72,
  bitDepth: 8,
  channels: 1,
  frames: pages.frames.map((p, j) => ({ planes: [Float32Array.from(p, Math.round)], name: `p${j}` })),
};

let dir: string;
beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'rankfold-stack-threads-'));
  await Promise.all(
    input.frames.map((f, j) =>
      sharp(Uint8Array.from(f.planes[0]), { raw: { width: W, height: H, channels: 1 } })
        .toColourspace('b-w')
        .png()
        .toFile(join(dir, `f${String(j).padStart(2, '0')}.png`)),
    ),
  );
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function compressWith(threads: '1' | '2', args: { bpp?: number; minPsnr?: number }) {
  const before = process.env.RANKFOLD_STACK_THREADS;
  process.env.RANKFOLD_STACK_THREADS = threads;
  try {
    const out = join(dir, `out-${threads}-${args.bpp ?? args.minPsnr}.rkf`);
    const budget =
      args.bpp !== undefined
        ? ({ kind: 'bpp', bpp: args.bpp } as const)
        : ({ kind: 'psnr', db: args.minPsnr as number } as const);
    const report = await compressStackFile(dir, out, { budget, force: true });
    return { bytes: readFileSync(out), report };
  } finally {
    if (before === undefined) delete process.env.RANKFOLD_STACK_THREADS;
    else process.env.RANKFOLD_STACK_THREADS = before;
  }
}

describe('compress --stack on 1 and 2 threads', () => {
  it('starts a worker when asked for 2 threads (so the comparison below exercises it)', async () => {
    const t = StackThreads.start(2);
    try {
      expect(t.threads).toBe(2);
    } finally {
      await t.close();
    }
  });

  for (const args of [{ bpp: 0.5 }, { bpp: 2 }, { minPsnr: 38 }])
    it(`writes byte-identical files and reports the same per-frame PSNR/SSIM (${JSON.stringify(args)})`, async () => {
      const one = await compressWith('1', args);
      const two = await compressWith('2', args);
      expect(one.bytes.equals(two.bytes)).toBe(true);
      expect(two.report.perFrame).toEqual(one.report.perFrame);
      // The figures are real: every frame measured (no NaN) and recorded in the file (SQAL).
      const h = openStack(new Uint8Array(two.bytes), 'out.rkf').header;
      two.report.perFrame.forEach((f, j) => {
        expect(Number.isFinite(f.psnr) && Number.isFinite(f.ssim)).toBe(true);
        expect(h.frameTable[j].psnr).toBe(Math.fround(f.psnr));
        expect(h.frameTable[j].ssim).toBe(Math.fround(f.ssim));
      });
    });
});

describe('quality measured once on the final file', () => {
  it('frames rebuilt from the kept coefficients equal the reader’s decode, sample for sample, residuals included', () => {
    const prep = prepareStack(forms);
    const fit = fitStack(prep, { maxBytes: Math.floor((1 * 64 * 72 * 12) / 8) });
    expect(fit.encoded.header.frameTable.filter((f) => f.residual[0]).length).toBeGreaterThan(2);
    const reader = openStack(fit.encoded.bytes, 'fit.rkf');
    const at = fit.encoded.frameOf();
    for (let j = 0; j < 12; j++)
      expect(Buffer.from(at(j)[0].buffer).equals(Buffer.from(reader.frame(j)[0].buffer))).toBe(true);
    // The measurement on the reader's frames (what the worker runs) gives the figures fitStack reports.
    const read = measureStackFile(fit.encoded.bytes, forms, forms.frames.keys(), true);
    expect(read).toEqual({ psnr: fit.psnr, ssim: fit.ssim });
    expect(measureFrames(forms, at, true)).toEqual({ psnr: fit.psnr, ssim: fit.ssim });
  });

  it('a frame list limits the work to those frames (the others stay NaN)', () => {
    const prep = prepareStack(input);
    const fit = fitStack(prep, { maxBytes: Math.floor((0.5 * W * H * N) / 8) });
    const some = measureFrames(input, fit.encoded.frameOf(), false, [1, 4]);
    expect(some.psnr[1]).toBe(fit.psnr[1]);
    expect(some.psnr[4]).toBe(fit.psnr[4]);
    expect(some.psnr.filter((v) => Number.isNaN(v)).length).toBe(N - 2);
    expect(some.ssim).toEqual([]);
  });
});
