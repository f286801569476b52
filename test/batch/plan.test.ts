// Planning a batch: output names, collisions, folder checks, filters and sharding.
import { mkdir, mkdtemp, rm, symlink, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseShardText } from '../../src-main/contract';
import { checkFolders, fileFilter, outputNames, planBatch, shardOf } from '../../src-main/node/batch/plan';

let root: string;
beforeAll(async () => {
  root = await mkdtemp(join(tmpdir(), 'rankfold-plan-'));
});
afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('outputNames', () => {
  it('mirrors folders and replaces the extension', () => {
    const m = outputNames(['a/b/c.png', 'x.tif', 'noext']);
    expect(Object.fromEntries(m)).toEqual({ 'a/b/c.png': 'a/b/c.rkf', 'x.tif': 'x.rkf', noext: 'noext.rkf' });
  });

  it('keeps both of two inputs that share a stem, by keeping their whole names', () => {
    const m = outputNames(['scans/a.png', 'scans/a.tif', 'scans/b.png', 'other/a.png']);
    expect(m.get('scans/a.png')).toBe('scans/a.png.rkf');
    expect(m.get('scans/a.tif')).toBe('scans/a.tif.rkf');
    expect(m.get('scans/b.png')).toBe('scans/b.rkf');
    expect(m.get('other/a.png')).toBe('other/a.rkf');
  });

  it('treats names that differ only in case or Unicode form as colliding (safe on case-insensitive disks)', () => {
    // "é" precomposed U+00E9 (NFC) and "e" + U+0301 (NFD): Unicode Standard Annex #15, canonical equivalence.
    const nfc = 'caf\u00e9.png';
    const nfd = 'cafe\u0301.tif';
    const m = outputNames(['Page.PNG', 'page.tif', nfc, nfd]);
    const outs = [...m.values()];
    expect(new Set(outs.map((o) => o.normalize('NFC').toLowerCase())).size).toBe(4);
    expect(m.get('Page.PNG')).toBe('Page.PNG.rkf');
  });

  it('falls back to a path-hash suffix when whole names still collide, independent of order', () => {
    const list = ['a.png', 'a.tif', 'a.png.tif'];
    // a.png → a.png.rkf (collides with a.tif on stem a) and a.png.tif → a.png.rkf (stem a.png): second stage.
    const m1 = outputNames(list);
    const m2 = outputNames(list.slice().reverse());
    expect(Object.fromEntries(m1)).toEqual(Object.fromEntries(m2));
    const outs = [...m1.values()];
    expect(new Set(outs).size).toBe(3);
    expect(m1.get('a.png')).toMatch(/^a\.png~[0-9a-f]{8}\.rkf$/);
    expect(m1.get('a.tif')).toBe('a.tif.rkf');
  });
});

describe('shards', () => {
  const paths = Array.from({ length: 500 }, (_, i) => `box${i % 7}/folder ${i % 13}/scan-${i}.tif`);

  it('N shards cover every file exactly once, for several N', () => {
    for (const n of [1, 2, 3, 7, 16]) {
      const seen = new Map<string, number>();
      for (let s = 0; s < n; s++)
        for (const p of paths) if (shardOf(p, n) === s) seen.set(p, (seen.get(p) ?? 0) + 1);
      expect(seen.size).toBe(paths.length);
      expect([...seen.values()].every((c) => c === 1)).toBe(true);
    }
  });

  it('does not depend on listing order, and spreads files roughly evenly', () => {
    const shuffled = paths.slice().sort(() => 0.5 - Math.random());
    for (const p of shuffled) expect(shardOf(p, 4)).toBe(shardOf(p, 4));
    const counts = [0, 0, 0, 0];
    for (const p of paths) counts[shardOf(p, 4)]++;
    // 500 files in 4 shards: binomial sd ≈ 9.7; every shard within ±5 sd of 125.
    for (const c of counts) expect(Math.abs(c - 125)).toBeLessThan(50);
  });

  it('uses the NFC form, so NFD names from macOS land in the same shard', () => {
    expect(shardOf('caf\u00e9.png', 8)).toBe(shardOf('cafe\u0301.png', 8));
  });

  it('parses I/N with I counting from 0', () => {
    expect(parseShardText('0/4')).toEqual({ index: 0, count: 4 });
    expect(parseShardText(' 3 / 4 ')).toEqual({ index: 3, count: 4 });
    expect(() => parseShardText('4/4')).toThrow(
      'Expected a shard index between 0 and 3 for shard but received "4/4" (shards count from 0)',
    );
    expect(() => parseShardText('1-4')).toThrow('Expected I/N such as 0/4 for shard but received "1-4"');
    expect(() => parseShardText('0/0')).toThrow('Expected a shard count N between 1 and 100000');
  });

  it('planBatch shards partition a real tree, and names agree across shards', async () => {
    const inDir = join(root, 'tree');
    for (let i = 0; i < 40; i++) {
      await mkdir(join(inDir, `d${i % 5}`), { recursive: true });
      await writeFile(join(inDir, `d${i % 5}`, `f${i}.png`), 'x');
    }
    await writeFile(join(inDir, 'd0', 'f0.tif'), 'x'); // collides with d0/f0.png
    const all = await planBatch(inDir, join(root, 'out'));
    const parts = await Promise.all(
      [0, 1, 2].map((index) => planBatch(inDir, join(root, 'out'), { shard: { index, count: 3 } })),
    );
    const union = parts.flatMap((p) => p.files);
    expect(union.map((f) => f.path).sort()).toEqual(all.files.map((f) => f.path).sort());
    expect(new Set(union.map((f) => f.path)).size).toBe(all.files.length);
    const nameOf = new Map(all.files.map((f) => [f.path, f.output]));
    for (const f of union) expect(f.output).toBe(nameOf.get(f.path));
    expect(nameOf.get('d0/f0.tif')).toBe('d0/f0.tif.rkf');
  });
});

describe('checkFolders', () => {
  it('refuses OUT_DIR equal to or inside IN_DIR, also through a symbolic link', async () => {
    const inDir = join(root, 'in1');
    await mkdir(join(inDir, 'sub'), { recursive: true });
    await symlink(inDir, join(root, 'link-to-in1'));
    await expect(checkFolders(inDir, inDir)).rejects.toThrow(
      'is the input folder; batch never writes inside the input folder',
    );
    await expect(checkFolders(inDir, join(inDir, 'sub', 'new'))).rejects.toThrow(
      'is inside the input folder',
    );
    await expect(checkFolders(inDir, join(root, 'link-to-in1', 'out'))).rejects.toThrow(
      'is inside the input folder',
    );
    await expect(checkFolders(join(root, 'nope'), join(root, 'o'))).rejects.toThrow('does not exist');
    const ok = await checkFolders(inDir, join(root, 'elsewhere'));
    expect(ok.outDir).toBe(join(root, 'elsewhere'));
  });

  it('refuses an output that would land inside IN_DIR when IN_DIR is inside OUT_DIR', async () => {
    const outDir = join(root, 'outer');
    const inDir = join(outDir, 'in');
    await mkdir(join(inDir, 'in'), { recursive: true });
    await writeFile(join(inDir, 'in', 'x.png'), 'x');
    await writeFile(join(inDir, 'y.png'), 'x');
    await expect(planBatch(inDir, outDir)).rejects.toThrow('would land inside the input folder');
  });
});

describe('walk and filters', () => {
  it('walks deep and unicode paths, skips hidden entries, applies include/exclude (picomatch 4 globs)', async () => {
    const inDir = join(root, 'deep');
    const deep = join(inDir, ...Array.from({ length: 12 }, (_, i) => `level-${i}-Überschrift-地図`));
    await mkdir(deep, { recursive: true });
    await writeFile(join(deep, 'Ångström plate №7.png'), 'x');
    await writeFile(join(inDir, 'keep.tif'), 'x');
    await writeFile(join(inDir, 'skip.xml'), 'x');
    await mkdir(join(inDir, '.cache'), { recursive: true });
    await writeFile(join(inDir, '.cache', 'hidden.png'), 'x');
    await writeFile(join(inDir, '.hidden.png'), 'x');
    const plan = await planBatch(inDir, join(root, 'deep-out'), { exclude: ['*.xml'] });
    expect(plan.files.map((f) => f.path)).toEqual([
      'keep.tif',
      `${Array.from({ length: 12 }, (_, i) => `level-${i}-Überschrift-地図`).join('/')}/Ångström plate №7.png`,
    ]);
    const only = await planBatch(inDir, join(root, 'deep-out'), { include: ['*.png'] });
    expect(only.files).toHaveLength(1);
    expect(fileFilter(['scans/**/*.tif'])('scans/a/b.tif')).toBe(true);
    expect(fileFilter(['scans/**/*.tif'])('other/b.tif')).toBe(false);
    expect(fileFilter(['./scans/*.tif'])('scans/b.tif')).toBe(true);
  });
});
