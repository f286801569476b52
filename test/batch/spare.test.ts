// The spare step of a one-machine --total run (spare.ts): the bytes left under the total go to the worst file,
// whose output is replaced only when the new encode has a higher PSNR; the sum on disk stays within the total,
// and no temp file is left behind.
import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { BatchRow, CompressReport } from '../../src-main/contract';
import type { BatchJobResult, BatchWork } from '../../src-main/node/batch/job';
import type { Run } from '../../src-main/node/batch/run-options';
import { spendSpare } from '../../src-main/node/batch/spare';
import { Tally } from '../../src-main/node/batch/tally';
import { okRow } from './rows';

let dir: string;
beforeEach(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-spare-'));
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** A pool whose encode writes `bytesFor(cap)` bytes at the job's output, at `psnrFor(cap)` dB. */
function fakePool(bytesFor: (cap: number) => number, psnrFor: (cap: number) => number) {
  const caps: number[] = [];
  return {
    caps,
    run: async (w: BatchWork) => {
      const job = w as { output: string; options: { budget: { bytes: number } } };
      const cap = job.options.budget.bytes;
      caps.push(cap);
      const bytes = bytesFor(cap);
      await writeFile(job.output, Buffer.alloc(bytes, 7));
      const report = {
        outputBytes: bytes,
        psnr: psnrFor(cap),
        ratio: 1,
        bpp: 1,
      } as unknown as CompressReport;
      return { ok: true as const, value: { report, fileSha256: 'x', timeMs: 1 } satisfies BatchJobResult };
    },
  };
}

async function setUp(total: number) {
  const rows: BatchRow[] = [];
  // Worst first after sorting: b (30 dB), then a (35 dB); 2000 + 1000 = 3000 bytes written.
  for (const [path, bytes, psnr] of [
    ['a.png', 1000, 35],
    ['b.png', 2000, 30],
  ] as const) {
    const outputAbs = join(dir, `${path}.rkf`);
    await writeFile(outputAbs, Buffer.alloc(bytes, 1));
    rows.push(okRow(path, { outputAbs, bytes, psnr, plan: { bytes, psnr, floor: 30, total } }));
  }
  const tally = new Tally({}, rows.length, 0);
  for (const r of rows) tally.add(r);
  const run = {
    collection: { total },
    o: { compress: { budget: { kind: 'rank', rank: 1 }, tile: 'auto' } },
    settings: 's',
    timeoutMs: 0,
  } as unknown as Run;
  return { rows, tally, run };
}

const onDisk = async () => {
  let sum = 0;
  for (const f of await readdir(dir)) sum += (await readFile(join(dir, f))).length;
  return sum;
};

describe('spendSpare', () => {
  it('gives the spare bytes to the worst file and replaces it when its PSNR is higher', async () => {
    const { rows, tally, run } = await setUp(3600);
    const pool = fakePool(
      (cap) => cap - 10,
      (cap) => 30 + (cap - 2000) / 100,
    );
    const replaced: string[] = [];
    const journal: BatchRow[] = [];
    const info = await spendSpare(run, {
      pool: pool as never,
      tally,
      append: async (r) => void journal.push(r),
      replaced: (p) => replaced.push(p),
      stopped: () => false,
    });
    // 600 bytes spare: b.png is tried under 2000 + 600 = 2600 and writes 2590 (36 dB); 10 bytes are left,
    // below the least worth an encode, so a.png is not tried.
    expect(pool.caps).toEqual([2600]);
    expect(info).toMatchObject({ before: 600, after: 10, tried: 1 });
    expect(info!.replaced).toEqual([{ path: 'b.png', from: 30, to: 36, bytesFrom: 2000, bytesTo: 2590 }]);
    const b = rows.find((r) => r.path === 'b.png')!;
    expect([b.bytes, b.psnr, b.plan!.bytes]).toEqual([2590, 36, 2600]);
    expect(replaced).toEqual(['b.png']);
    expect(journal).toEqual([b]);
    expect(await readdir(dir)).toEqual(['a.png.rkf', 'b.png.rkf']);
    expect(await onDisk()).toBe(3590);
    expect(await onDisk()).toBeLessThanOrEqual(3600);
  });

  it('keeps the output when the new encode is not better, and leaves no temp file', async () => {
    const { rows, tally, run } = await setUp(3600);
    const pool = fakePool(
      (cap) => cap,
      () => 29,
    );
    const info = await spendSpare(run, {
      pool: pool as never,
      tally,
      append: async () => {},
      replaced: () => {},
      stopped: () => false,
    });
    // Both files tried (worst first), neither replaced; the spare bytes stay spare.
    expect(pool.caps).toEqual([2600, 1600]);
    expect(info).toMatchObject({ before: 600, after: 600, tried: 2, replaced: [] });
    expect(rows.map((r) => r.psnr)).toEqual([35, 30]);
    expect(await readdir(dir)).toEqual(['a.png.rkf', 'b.png.rkf']);
    expect(await onDisk()).toBe(3000);
  });
});
