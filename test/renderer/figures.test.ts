// The numbers the page works out itself. The model figures follow Eckart–Young–Mirsky (Eckart & Young
// 1936, Psychometrika 1(3), 211–218): for A = Σ σᵢuᵢvᵢᵀ, ‖A − A_k‖_F² = Σ_{i>k} σᵢ² and ‖A − A_k‖₂ = σ_{k+1};
// PSNR = 10·log10(peak² / MSE) with MSE = ‖E‖_F² / samples (common practice).
import { describe, expect, it } from 'vitest';
import { type CompressReport, encodeFactorSet, type StackFrameInfo } from '../../src-main/contract';
import {
  estimateFigures,
  FIRST_PASS_RANK,
  removedForDisplay,
  reportFigures,
  secondPassRank,
  stackFigures,
} from '../../src-renderer/figures';
import { LowRankModel } from '../../src-renderer/model';

/** A 3×4 grey plane with σ = 3, 2, 1 on unit vectors: A = diag(3, 2, 1) padded with a zero column. */
function model(): LowRankModel {
  const u = new Float32Array(9);
  const v = new Float32Array(12);
  for (let i = 0; i < 3; i++) {
    u[i * 3 + i] = 1;
    v[i * 4 + i] = 1;
  }
  const bytes = encodeFactorSet(
    { width: 4, height: 3, channels: ['gray'], ranks: [3], energy: [14], peak: 255, complete: true },
    { 'sigma.0': Float32Array.from([3, 2, 1]), 'u.0': u, 'v.0': v, 'src.0': new Uint8Array(12) },
  );
  return new LowRankModel(new Uint8Array(bytes).buffer);
}

describe('estimateFigures', () => {
  const scan = { rawBytes: 12, width: 4, height: 3 };

  it('errors and PSNR from the spectrum alone', () => {
    const f = estimateFigures(model(), scan, undefined, 1);
    expect(f['frobenius-optimal']).toBeCloseTo(Math.sqrt(2 * 2 + 1 * 1), 12);
    expect(f.frobenius).toBe(f['frobenius-optimal']);
    expect(f['spectral-bound']).toBe(2);
    expect(f.psnr).toBeCloseTo(10 * Math.log10((255 * 255) / (5 / 12)), 10);
    expect(estimateFigures(model(), scan, undefined, 3)['spectral-bound']).toBe(0);
  });

  it('before any encode, sizes from k·planes·(width + height + 1) bytes plus 128', () => {
    const f = estimateFigures(model(), scan, undefined, 2);
    expect(f.bytes).toBe(2 * 1 * (4 + 3 + 1) + 128);
    expect(f.ratio).toBe(12 / 144);
    expect(f.bpp).toBe((8 * 144) / 12);
  });

  it("after an encode, sizes from that encode's bytes per rank", () => {
    const f = estimateFigures(model(), scan, { rank: 20, bytes: 6500 }, 50);
    expect(f.bytes).toBe(325 * 50 + 128);
  });
});

describe('reportFigures and stackFigures', () => {
  it("take the encoder's figures as they are", () => {
    const r = {
      psnr: 30.1,
      ssim: 0.9,
      ratio: 12.5,
      outputBytes: 20_000,
      bpp: 0.64,
      errors: { spectralBound: 11, frobeniusOptimal: 900, frobenius: 950 },
    } as CompressReport;
    expect(reportFigures(r)).toEqual({
      psnr: 30.1,
      ssim: 0.9,
      ratio: 12.5,
      bytes: 20_000,
      bpp: 0.64,
      'spectral-bound': 11,
      'frobenius-optimal': 900,
      frobenius: 950,
    });
  });

  it('a stack frame: its recorded quality, the sizes of the whole stack', () => {
    const info = { psnr: 39.5, ssim: undefined, fileBytes: 3100, rawBytes: 18_432, frameCount: 6 };
    const f = stackFigures(info as StackFrameInfo, { width: 64, height: 48 });
    expect(f.psnr).toBe(39.5);
    expect(f.ssim).toBeUndefined();
    expect(f.bytes).toBe(3100);
    expect(f.ratio).toBeCloseTo(5.9458, 4);
    expect(f.bpp).toBeCloseTo((8 * 3100) / (64 * 48 * 6), 12);
  });
});

describe('removedForDisplay', () => {
  it('offsets to mid-grey and multiplies by the gain, leaving the removed part untouched', () => {
    const removed = [Float32Array.from([0, 1, -0.5, 2])];
    const shown = removedForDisplay(removed, 255, 8);
    expect([...shown[0]]).toEqual([127.5, 135.5, 123.5, 143.5]);
    expect([...removed[0]]).toEqual([0, 1, -0.5, 2]);
    expect([...removedForDisplay(removed, 65_535, 1)[0]]).toEqual([32_767.5, 32_768.5, 32_767, 32_769.5]);
  });
});

describe('factorisation ranks after opening a scan', () => {
  it('a small first pass, then a deeper one that shrinks as scans grow', () => {
    expect(FIRST_PASS_RANK).toBe(24);
    expect(secondPassRank(512 * 512)).toBe(300);
    expect(secondPassRank(1e6)).toBe(300);
    expect(secondPassRank(1e6 + 1)).toBe(200);
    expect(secondPassRank(4e6)).toBe(200);
    expect(secondPassRank(12e6)).toBe(120);
    expect(secondPassRank(16e6)).toBe(120);
    expect(secondPassRank(16e6 + 1)).toBe(80);
  });
});
