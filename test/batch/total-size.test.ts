// `--total SIZE` as issue #13 writes it: 2TB, 40GB, 250MB, a byte count, or N% of the raw samples. Decimal
// units are SI (1 GB = 10^9 bytes), binary ones IEC (1 TiB = 2^40 bytes): common practice, as docs/cli.md says.
import { describe, expect, it } from 'vitest';
import { UsageError } from '../../src-main/contract';
import { parseCollectionArgs } from '../../src-main/node/cli/args/collection-args';

const total = (text: string) => parseCollectionArgs({ total: text })?.total;

describe('--total SIZE', () => {
  it('reads the sizes of the issue', () => {
    expect(total('2TB')).toEqual({ kind: 'bytes', bytes: 2e12 });
    expect(total('40GB')).toEqual({ kind: 'bytes', bytes: 4e10 });
    expect(total('250MB')).toEqual({ kind: 'bytes', bytes: 2.5e8 });
    expect(total('120000')).toEqual({ kind: 'bytes', bytes: 120_000 });
    expect(total('4%')).toEqual({ kind: 'percent', percent: 4 });
    expect(total('2TiB')).toEqual({ kind: 'bytes', bytes: 2 * 2 ** 40 });
  });

  it('refuses what is not a size, and per-file budgets beside a total', () => {
    expect(() => total('lots')).toThrow(UsageError);
    expect(() => parseCollectionArgs({ total: '2TB', budget: '5%' })).toThrow(
      /--total plans every file's size itself; it does not take --budget/,
    );
    expect(parseCollectionArgs({ total: '2TB', 'min-psnr': '32' })?.minPsnr).toBe(32);
  });
});
