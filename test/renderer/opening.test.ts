// The rank a scan opens at (src-renderer/figures.ts openingRank) and the plain progress words
// (src-renderer/progress-words.ts). Reference values are worked by hand from:
// - the SVD of a diagonal matrix with non-negative, decreasing entries is that diagonal (U = V = I;
//   Golub & Van Loan, Matrix Computations, 4th ed., §2.4);
// - Eckart–Young–Mirsky: ‖A − A_k‖_F² = Σ_{i>k} σᵢ² (Eckart & Young, Psychometrika 1(3), 1936);
// - PSNR = 10·log10(peak² / MSE), MSE = ‖A − A_k‖_F² / (m·n) (common practice).
import { describe, expect, it } from 'vitest';
import { encodeFactorSet } from '../../src-main/contract';
import { openingRank, openingText } from '../../src-renderer/figures';
import { LowRankModel } from '../../src-renderer/model';
import { progressLine, shownFraction, stageWords, timeLeftText } from '../../src-renderer/progress-words';

/** diag(200, 100, 10, 1) as a 4×4 scan, holding its first `held` layers. */
function diagonal(held: number): LowRankModel {
  const sigma = [200, 100, 10, 1].slice(0, held);
  const u = new Float32Array(held * 4);
  const v = new Float32Array(held * 4);
  for (let i = 0; i < held; i++) {
    u[i * 4 + i] = 1;
    v[i * 4 + i] = 1;
  }
  const bytes = encodeFactorSet(
    // ‖A‖_F² = 200² + 100² + 10² + 1² = 50101.
    {
      width: 4,
      height: 4,
      channels: ['gray'],
      ranks: [held],
      energy: [50101],
      peak: 255,
      complete: held === 4,
    },
    { 'sigma.0': Float32Array.from(sigma), 'u.0': u, 'v.0': v, 'src.0': new Uint8Array(16) },
  );
  return new LowRankModel(new Uint8Array(bytes).buffer);
}

describe('openingRank', () => {
  it('is the smallest rank whose truncation reaches the floor, from the tail energy', () => {
    // 35 dB ⇔ MSE ≤ 255² / 10^3.5 = 20.56 ⇔ tail ≤ 329.0. Tails: k=1 10101, k=2 101, k=3 1.
    expect(openingRank(diagonal(4), 4, 35)).toEqual({ rank: 2, why: 'reached', floorDb: 35 });
    // 50 dB ⇔ tail ≤ 16 · 255² / 10^5 = 10.40: k=3.
    expect(openingRank(diagonal(4), 4, 50).rank).toBe(3);
    expect(openingText(openingRank(diagonal(4), 4, 35))).toMatch(
      /^Opened at rank 2: the smallest rank .* 35 dB/,
    );
  });

  it('waits for more layers when the floor is beyond the layers held, and stops at the cap', () => {
    // Only one layer held, the page will hold 4: the tail energy ‖A‖_F² − σ₁² = 10101 says rank 1 is short.
    expect(openingRank(diagonal(1), 4, 35)).toEqual({ rank: 1, why: 'pending', floorDb: 35 });
    // Capped at 2 layers, 50 dB is not reached.
    expect(openingRank(diagonal(4), 2, 50)).toEqual({ rank: 2, why: 'capped', floorDb: 50 });
  });
});

describe('progress in plain words', () => {
  it('never shows an internal stage name', () => {
    expect(stageWords('factor')).toBe('factorising');
    expect(stageWords('factoring plane Y')).toBe('factorising the Y plane');
    expect(stageWords('allocate')).toBe('choosing ranks and precision');
    expect(stageWords('layers')).toBe('choosing ranks and precision');
    expect(stageWords('spectrum')).toBe('measuring the singular values');
    expect(stageWords('some-new-stage')).toBe('working');
  });

  it('fills the bar from the reported fraction or the expected time, never past 95 % by guess', () => {
    expect(shownFraction(0.5, 100, 10_000)).toBe(0.5);
    expect(shownFraction(0, 2_000, 10_000)).toBeCloseTo(0.2, 12);
    expect(shownFraction(0, 50_000, 10_000)).toBe(0.95);
    // Half done after 6 s: 6 s more at the same pace.
    expect(timeLeftText(0.5, 6_000, 0)).toBe('about 6 s left');
    expect(timeLeftText(0.95, 20_000, 10_000)).toBe('nearly done');
    expect(
      progressLine({
        label: 'Finding the smallest file ≥ 38 dB…',
        stage: 'factor',
        fraction: 0.25,
        elapsedMs: 3000,
        expectedMs: 12_000,
      }),
    ).toBe('Finding the smallest file ≥ 38 dB — factorising… 25 % · about 9 s left');
  });
});
