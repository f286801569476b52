// The page's budget text (Budget card and Batch panel): the page's own forms (rank, bpp, dB) and the CLI's
// --budget forms (sizes in decimal or binary units, %), which the contract parses. Unit sizes: SI prefixes
// (1 kB = 1000 B, 1 MB = 10⁶ B) and IEC binary prefixes (1 MiB = 2²⁰ B), IEC 80000-13.
import { describe, expect, it } from 'vitest';
import { parseBudgetField } from '../../src-renderer/budget-field';

describe('parseBudgetField', () => {
  it('reads the page forms: rank, bits per pixel and a PSNR floor, in any case and spacing', () => {
    expect(parseBudgetField('rank 40')).toEqual({ kind: 'rank', rank: 40 });
    expect(parseBudgetField('  RANK7 ')).toEqual({ kind: 'rank', rank: 7 });
    expect(parseBudgetField('0.5 bpp')).toEqual({ kind: 'bpp', bpp: 0.5 });
    expect(parseBudgetField('2BPP')).toEqual({ kind: 'bpp', bpp: 2 });
    expect(parseBudgetField('38 dB')).toEqual({ kind: 'psnr', db: 38 });
    expect(parseBudgetField('41.25db')).toEqual({ kind: 'psnr', db: 41.25 });
  });

  it('reads sizes in decimal and binary units, and percentages, as the CLI does', () => {
    expect(parseBudgetField('2.5 MB')).toEqual({ kind: 'bytes', bytes: 2_500_000 });
    expect(parseBudgetField('250kB')).toEqual({ kind: 'bytes', bytes: 250_000 });
    expect(parseBudgetField('8kB')).toEqual({ kind: 'bytes', bytes: 8000 });
    expect(parseBudgetField('2MiB')).toEqual({ kind: 'bytes', bytes: 2 * 1024 * 1024 });
    expect(parseBudgetField('1.5 KiB')).toEqual({ kind: 'bytes', bytes: 1536 });
    expect(parseBudgetField('4096')).toEqual({ kind: 'bytes', bytes: 4096 });
    expect(parseBudgetField('5 %')).toEqual({ kind: 'percent', percent: 5 });
    expect(parseBudgetField('0.5%')).toEqual({ kind: 'percent', percent: 0.5 });
  });

  it('refuses negative, empty, out-of-range and unknown budgets, naming what was typed', () => {
    // U+2212 MINUS SIGN, which a copy from a document gives, and the ASCII hyphen-minus.
    expect(() => parseBudgetField('−3')).toThrow(/−3/);
    expect(() => parseBudgetField('-3')).toThrow(/-3/);
    expect(() => parseBudgetField('rank -1')).toThrow(/rank -1/);
    expect(() => parseBudgetField('-5 dB')).toThrow(/-5 dB/);
    expect(() => parseBudgetField('')).toThrow(/budget/);
    expect(() => parseBudgetField('3 apples')).toThrow(/3 apples/);
    // The contract's one message for a percentage out of range (contract/budget.ts).
    expect(() => parseBudgetField('0%')).toThrow(
      /percentage between 0.001 and 100 for budget but received 0 /,
    );
    expect(() => parseBudgetField('101%')).toThrow(
      /percentage between 0.001 and 100 for budget but received 101 /,
    );
    // Under the 64-byte floor of a file.
    expect(() => parseBudgetField('63')).toThrow(/64 bytes/);
  });
});
