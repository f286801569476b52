// The numbers the page works out itself. The model figures follow Eckart–Young–Mirsky (Eckart & Young
// 1936, Psychometrika 1(3), 211–218): for A = Σ σᵢuᵢvᵢᵀ, ‖A − A_k‖_F² = Σ_{i>k} σᵢ² and ‖A − A_k‖₂ = σ_{k+1};
// PSNR = 10·log10(peak² / MSE) with MSE = ‖E‖_F² / samples (common practice).
import { describe, expect, it } from 'vitest';
import { type CompressReport, encodeFactorSet, type StackFrameInfo } from '../../src-main/contract';
import {
  addCalibration,
  estimateFigures,
  FIRST_PASS_RANK,
  removedForDisplay,
  reportFigures,
  reportRank,
  secondPassRank,
  sizeEstimate,
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
    const f = estimateFigures(model(), scan, [], 1);
    expect(f.rank).toBe(1);
    expect(f['frobenius-optimal']).toBeCloseTo(Math.sqrt(2 * 2 + 1 * 1), 12);
    expect(f.frobenius).toBe(f['frobenius-optimal']);
    expect(f['spectral-bound']).toBe(2);
    expect(f.psnr).toBeCloseTo(10 * Math.log10((255 * 255) / (5 / 12)), 10);
    expect(estimateFigures(model(), scan, [], 3)['spectral-bound']).toBe(0);
  });

  it('no SSIM, and no size before an encode makes one trustworthy', () => {
    const f = estimateFigures(model(), scan, [], 2);
    expect(f.ssim).toBeUndefined();
    expect(f.bytes).toBeUndefined();
    expect(f.ratio).toBeUndefined();
    expect(f.bpp).toBeUndefined();
  });

  it('beyond the layers the page holds: only the rank, no errors from a partial spectrum', () => {
    expect(estimateFigures(model(), scan, [], 4)).toEqual({ rank: 4 });
  });

  it('sizes, ratio and bits per pixel from a nearby encode', () => {
    const f = estimateFigures(model(), scan, [{ rank: 2, bytes: 6 }], 2);
    expect(f).toMatchObject({ bytes: 6, ratio: 2, bpp: 4 });
  });
});

describe('sizeEstimate', () => {
  it('a measured rank gives its own size', () => {
    expect(sizeEstimate([{ rank: 20, bytes: 6500 }], 20)).toBe(6500);
  });
  it('between two measured ranks at most 3× apart: bytes per rank interpolated', () => {
    // camera.png, whole plane (`rankfold compress --rank k --tile 0 --json`): 6506 B at 20, 59393 at 107
    // (5.35× apart: no estimate) and 27510 at 60; with 20 and 60 measured, rank 40 lies between.
    const m = [
      { rank: 20, bytes: 6506 },
      { rank: 60, bytes: 27_510 },
    ];
    expect(sizeEstimate(m, 40)).toBeCloseTo(40 * (6506 / 20 + (27_510 / 60 - 6506 / 20) / 2), 6);
    expect(sizeEstimate([m[0], { rank: 107, bytes: 59_393 }], 60)).toBeUndefined();
  });
  it('near one measured rank (±10 %): in proportion; further away: none', () => {
    expect(sizeEstimate([{ rank: 20, bytes: 6000 }], 22)).toBe(6600);
    expect(sizeEstimate([{ rank: 20, bytes: 6000 }], 18)).toBe(5400);
    expect(sizeEstimate([{ rank: 20, bytes: 6000 }], 23)).toBeUndefined();
    expect(sizeEstimate([{ rank: 20, bytes: 6000 }], 50)).toBeUndefined();
    expect(sizeEstimate([], 50)).toBeUndefined();
  });
  it('remembers the latest size per rank, most recent ranks kept', () => {
    let m = addCalibration([], { rank: 20, bytes: 1 });
    m = addCalibration(m, { rank: 20, bytes: 2 });
    expect(m).toEqual([{ rank: 20, bytes: 2 }]);
    for (let k = 1; k <= 20; k++) m = addCalibration(m, { rank: k, bytes: k }, 3);
    expect(m.map((c) => c.rank)).toEqual([18, 19, 20]);
  });
});

describe('reportRank', () => {
  it('the base rank of a whole plane, the mean tile rank when tiled', () => {
    expect(reportRank({ ranks: [{ channel: 'gray', rank: 472 }] })).toBe(472);
    const tiles = (mean: number) => ({ count: 4, min: 1, max: 9, mean, total: 4 * mean });
    expect(
      reportRank({
        ranks: [
          { channel: 'r', tiles: tiles(5) },
          { channel: 'g', tiles: tiles(6.25) },
        ],
      }),
    ).toBe(5.6);
    expect(reportRank({ ranks: [] })).toBeUndefined();
  });
});

describe('reportFigures and stackFigures', () => {
  it('with a residual layer, Total error is the decoded file’s (from its PSNR), not the base layer’s', () => {
    // `rankfold compress unseen-page.png --min-psnr 38 --tile 0 --json` (the acceptance page, 4 Dec): the
    // residual layer alone; errors.frobenius is the rank-0 base's, √(Σ a²).
    const r = {
      width: 2000,
      height: 1500,
      channels: 1,
      bitDepth: 8,
      ranks: [{ channel: 'gray', rank: 0 }],
      psnr: 38.0103358233005,
      errors: { spectralBound: Number.NaN, frobeniusOptimal: 278232.5, frobenius: 278232.5 },
      layers: { residualBytes: 32674 },
    } as CompressReport;
    const e = reportFigures(r).frobenius as number;
    // PSNR = 10·log10(N·255²/e²) holds again for the figure shown.
    expect(10 * Math.log10((3e6 * 255 * 255) / (e * e))).toBeCloseTo(38.0103358233005, 10);
    expect(e).toBeLessThan(278232.5 / 40);
    expect(reportFigures(r)['frobenius-optimal']).toBe(278232.5);
  });

  it('a grey rank-0 file shows σ₁ of the page’s spectrum as its largest error, never for colour or ranks > 0', () => {
    // Eckart–Young–Mirsky: the spectral error of the rank-0 truncation is σ₁ (‖A − A₀‖₂ = ‖A‖₂).
    const spectrum = { planes: [{}], spectralBound: (k: number) => [5000, 300, 20][k] };
    const grey0 = {
      channels: 1,
      ranks: [{ channel: 'gray', rank: 0 }],
      errors: { spectralBound: Number.NaN, frobeniusOptimal: 9, frobenius: 9 },
    } as CompressReport;
    expect(reportFigures(grey0, spectrum)['spectral-bound']).toBe(5000);
    expect(reportFigures(grey0)['spectral-bound']).toBeNaN();
    // As the page receives it: JSON turns NaN into null.
    const wire = JSON.parse(JSON.stringify(grey0)) as CompressReport;
    expect(wire.errors.spectralBound).toBeNull();
    expect(reportFigures(wire, spectrum)['spectral-bound']).toBe(5000);
    const colour0 = { ...grey0, channels: 3, ranks: [0, 0, 0].map((rank) => ({ channel: 'y', rank })) };
    expect(reportFigures(colour0 as CompressReport, spectrum)['spectral-bound']).toBeNaN();
    const grey7 = {
      ...grey0,
      ranks: [{ channel: 'gray', rank: 7 }],
      errors: { ...grey0.errors, spectralBound: 11 },
    };
    expect(reportFigures(grey7 as CompressReport, spectrum)['spectral-bound']).toBe(11);
  });

  it("take the encoder's figures as they are", () => {
    const r = {
      ranks: [{ channel: 'gray', rank: 7 }],
      psnr: 30.1,
      ssim: 0.9,
      ratio: 12.5,
      outputBytes: 20_000,
      bpp: 0.64,
      errors: { spectralBound: 11, frobeniusOptimal: 900, frobenius: 950 },
    } as CompressReport;
    expect(reportFigures(r)).toEqual({
      rank: 7,
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
