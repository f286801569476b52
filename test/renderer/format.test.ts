// How the page writes numbers. Decimal byte units (1 kB = 1000 B) as in IEC 80000-13; the expected strings
// are those Number.prototype.toFixed gives (ECMA-262 §21.1.3.3), written out by hand.
import { describe, expect, it } from 'vitest';
import { formatBytes, formatPsnr, METRICS, readoutCell } from '../../src-renderer/format';

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
  it('formats each metric: dB, SSIM, ratio, size, bpp and the three errors', () => {
    const text = (m: (typeof METRICS)[number], v: number) => readoutCell(m, v, true)?.text;
    expect(text('psnr', 24.5437)).toBe('24.54 dB');
    expect(text('ssim', 0.658_61)).toBe('0.6586');
    expect(text('ratio', 40.27)).toBe('40.3 : 1');
    expect(text('bytes', 6500)).toBe('6.5 kB');
    expect(text('bpp', 0.199_12)).toBe('0.199');
    expect(text('spectral-bound', 1656.594)).toBe('1656.59');
    expect(text('frobenius-optimal', 7700.04)).toBe('7700.0');
    expect(text('frobenius', 7741.46)).toBe('7741.5');
  });

  it('a lossless result reads ∞ dB', () => {
    expect(formatPsnr(Number.POSITIVE_INFINITY)).toBe('∞ dB');
    expect(readoutCell('psnr', Number.POSITIVE_INFINITY, true)).toEqual({ value: 'Infinity', text: '∞ dB' });
  });

  it('keeps the exact value for data-value and marks estimates with ≈', () => {
    expect(readoutCell('ratio', 40.2745, true)).toEqual({ value: '40.2745', text: '40.3 : 1' });
    expect(readoutCell('ratio', 40.2745, false)).toEqual({ value: '40.2745', text: '≈ 40.3 : 1' });
  });

  it('a missing value clears an exact readout and leaves an estimate alone', () => {
    expect(readoutCell('ssim', undefined, true)).toEqual({ value: '', text: '–' });
    expect(readoutCell('ssim', Number.NaN, true)).toEqual({ value: '', text: '–' });
    expect(readoutCell('ssim', undefined, false)).toBeUndefined();
    expect(readoutCell('psnr', Number.NaN, false)).toBeUndefined();
  });

  it('lists the eight readouts of the Figures card', () => {
    expect([...METRICS].sort()).toEqual(
      ['bpp', 'bytes', 'frobenius', 'frobenius-optimal', 'psnr', 'ratio', 'spectral-bound', 'ssim'].sort(),
    );
  });
});
