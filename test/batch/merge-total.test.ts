// `batch --merge` of shards that encoded one shared plan (issue #13): the sum against the total, the bytes that
// remain, the bytes no file was given (the reserve), and each shard's drift against its planned caps.
import { describe, expect, it } from 'vitest';
import type { BatchRow } from '../../src-main/contract';
import { mergedTotalLines } from '../../src-main/node/batch/collection-text';
import { okRow } from './rows';

function row(
  path: string,
  shard: string,
  bytes: number,
  cap: number,
  extra: Partial<BatchRow> = {},
): BatchRow {
  return okRow(path, {
    bytes,
    psnr: 40,
    shard,
    plan: { bytes: cap, psnr: 40, floor: 39, total: 10_000 },
    ...extra,
  });
}

describe('mergedTotalLines', () => {
  it('prints the remaining bytes, the reserve and each shard’s drift from the plan', () => {
    const rows = [
      row('a.png', '0/2', 2900, 3000),
      row('b.png', '0/2', 1000, 1000),
      row('c.png', '1/2', 4500, 4700),
      // A failed file wrote nothing; its cap counts as planned for its shard.
      row('d.png', '1/2', 0, 200, { status: 'failed', bytes: undefined, psnr: undefined }),
    ];
    const { lines, over } = mergedTotalLines(rows);
    expect(over).toBe(false);
    // 2900 + 1000 + 4500 = 8400 written of 10,000; caps 8900, so 1100 bytes were given to no file.
    expect(lines).toContain('total: 8400 bytes (8.40 kB) written of 10000 (10.00 kB), within the total');
    expect(lines).toContain('remaining: 1600 bytes (1.60 kB) of the total not written');
    expect(lines[2]).toMatch(/^reserve: 1100 bytes \(1\.10 kB\)/);
    expect(lines).toContain(
      'drift of shard 0/2: 3900 bytes written against 4000 planned for its 2 files (-100 bytes, -2.5 %)',
    );
    expect(lines).toContain(
      'drift of shard 1/2: 4500 bytes written against 4900 planned for its 2 files (-400 bytes, -8.2 %)',
    );
  });

  it('says when the sum is over the total, and is silent without a plan', () => {
    const { lines, over } = mergedTotalLines([row('a.png', '0/1', 10_050, 10_000)]);
    expect(over).toBe(true);
    expect(lines[0]).toMatch(/OVER THE TOTAL/);
    expect(lines).toContain('remaining: none; the files are 50 bytes over the total');
    expect(mergedTotalLines([row('a.png', '0/1', 5, 5, { plan: undefined })])).toEqual({
      lines: [],
      over: false,
    });
  });
});
