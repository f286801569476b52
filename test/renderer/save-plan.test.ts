/**
 * What Save says it will write (src-renderer/save-plan.ts): the budget, the rank of the encoder's file and,
 * for a file with a wavelet residual layer, that layer too. No outside reference values: the sentences are
 * the page's own wording.
 */
import { describe, expect, it } from 'vitest';
import { type SavePlanInput, savePlanText } from '../../src-renderer/save-plan';

const psnr38 = { kind: 'psnr', db: 38 } as const;
const plan = (shown: SavePlanInput['shown']): SavePlanInput => ({
  kind: 'rkf',
  scanName: 'page.png',
  bitDepth: 8,
  budget: psnr38,
  tiled: false,
  tile: 64,
  shown,
  cleanedReady: false,
});
const figures = (rank: number, residual: boolean) => ({
  values: { rank, bytes: 32_851, psnr: 38.0103 },
  exact: true,
  budget: psnr38,
  tiled: false,
  residual,
});

describe('savePlanText', () => {
  it('names the layers of the file the encoder chose for a budget', () => {
    expect(savePlanText(plan(figures(185, false)))).toBe(
      'Will write page.rkf: compressed at at least 38 dB PSNR (rank 185), whole planes; 32.9 kB exactly (this budget was encoded), PSNR 38.01 dB.',
    );
    expect(savePlanText(plan(figures(0, true)))).toContain('(a wavelet residual layer alone), whole planes');
    expect(savePlanText(plan(figures(12, true)))).toContain('(rank 12 + a wavelet residual layer)');
  });

  it('says nothing of rank or size before the budget was encoded', () => {
    expect(savePlanText(plan(undefined))).toBe(
      'Will write page.rkf: compressed at at least 38 dB PSNR, whole planes; size not known until the encoder has run at this budget.',
    );
  });
});
