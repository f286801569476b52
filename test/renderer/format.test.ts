// How the page writes numbers. Decimal byte units (1 kB = 1000 B) as in IEC 80000-13; the expected strings
// are those Number.prototype.toFixed gives (ECMA-262 §21.1.3.3), written out by hand.
import { describe, expect, it } from 'vitest';
import { formatBytes, formatPsnr, METRIC_HELP, METRICS, readoutCell } from '../../src-renderer/format';

describe('formatBytes', () => {
  it('whole bytes below 1 kB, one decimal in kB, two in MB and GB', () => {
    expect(formatBytes(0)).toBe('0 B');
    expect(formatBytes(999)).toBe('999 B');
    expect(formatBytes(999.4)).toBe('999 B');
    expect(formatBytes(1000)).toBe('1.0 kB');
    expect(formatBytes(6549)).toBe('6.5 kB');
    expect(formatBytes(139_536)).toBe('139.5 kB');
    expect(formatBytes(999_949)).toBe('999.9 kB');
    expect(formatBytes(2_500_000)).toBe('2.50 MB');
    expect(formatBytes(1_234_567_890)).toBe('1.23 GB');
  });
});

describe('readoutCell', () => {
  it('formats each metric: rank, dB, SSIM, ratio, size, bpp and the three errors ', () => {
    const text = (m: (typeof METRICS)[number], v: number) => readoutCell(m, v, true).text;
    expect(text('rank', 472)).toBe('472');
    expect(text('rank', 5.6)).toBe('5.6 (mean)');
    expect(text('psnr', 24.5437)).toBe('24.54 dB');
    expect(text('ssim', 0.658_61)).toBe('0.6586');
    expect(text('ratio', 40.27)).toBe('40.3 : 1');
    expect(text('bytes', 6500)).toBe('6.5 kB');
    expect(text('bpp', 0.199_12)).toBe('0.199');
    expect(text('spectral-bound', 1656.594)).toBe('1656.59');
    expect(text('frobenius-optimal', 7700.04)).toBe('7700.0');
    expect(text('frobenius', 7741.46)).toBe('7741.5');
  });

  it('a figure the report has none of (JSON null, NaN) reads –', () => {
    // σₖ₊₁ of a file without a base layer: NaN in the engine, null once the report went through JSON.
    expect(readoutCell('spectral-bound', null, true)).toEqual({ value: '', text: '–', exact: true });
    expect(readoutCell('spectral-bound', Number.NaN, true)).toEqual({ value: '', text: '–', exact: true });
  });

  it('a lossless result reads ∞ dB', () => {
    expect(formatPsnr(Number.POSITIVE_INFINITY)).toBe('∞ dB');
    expect(readoutCell('psnr', Number.POSITIVE_INFINITY, true)).toEqual({
      value: 'Infinity',
      text: '∞ dB',
      exact: true,
    });
  });

  it('keeps the exact value for data-value, says which is exact, and marks estimates with ≈', () => {
    expect(readoutCell('ratio', 40.2745, true)).toEqual({ value: '40.2745', text: '40.3 : 1', exact: true });
    expect(readoutCell('ratio', 40.2745, false)).toEqual({
      value: '40.2745',
      text: '≈ 40.3 : 1',
      exact: false,
    });
    // The rank an estimate is for is known, not estimated: no ≈.
    expect(readoutCell('rank', 50, false).text).toBe('50');
  });

  it('a missing value clears the readout, exact or estimated (no old exact figure stays unmarked)', () => {
    expect(readoutCell('ssim', undefined, true)).toEqual({ value: '', text: '–', exact: true });
    expect(readoutCell('ssim', Number.NaN, true)).toEqual({ value: '', text: '–', exact: true });
    expect(readoutCell('ssim', undefined, false)).toEqual({ value: '', text: '–', exact: false });
  });

  it('lists the nine readouts of the Figures card, each with a tooltip naming its unit', () => {
    expect([...METRICS].sort()).toEqual(
      [
        'bpp',
        'bytes',
        'frobenius',
        'frobenius-optimal',
        'psnr',
        'rank',
        'ratio',
        'spectral-bound',
        'ssim',
      ].sort(),
    );
    for (const m of METRICS) expect(METRIC_HELP[m].length).toBeGreaterThan(20);
    expect(METRIC_HELP.frobenius).toMatch(/grey levels/);
    expect(METRIC_HELP.psnr).toMatch(/dB/);
  });
});
