// The house's structure held in a test (docs/architecture.md): folders import only folders below
// them, with no cycle; no source file over 400 lines; few copied regions. A failure names the
// import, file or copy to look at.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { repoRoot } from '../helpers/fixtures';
import { copiedRegions, folderCycles, folderGraph, isKernel, sourceFiles } from './source-tree';

/** Most lines in one source file (AssemblyScript kernels excepted). */
const MAX_LINES = 400;
/** Most regions of six or more identical code lines that stand elsewhere in src-main too. */
const MAX_COPIES = 8;

const SOURCE_DIRS = ['src-main', 'src-renderer'];

describe('structure of the house', () => {
  const graph = folderGraph(SOURCE_DIRS);

  it('has no import cycle between folders', () => {
    expect(folderCycles(graph)).toEqual([]);
  });

  it('keeps the layer order: contract < engine < node < electron, and the page beside node', () => {
    const rank = (folder: string): number =>
      folder.startsWith('src-main/contract')
        ? 1
        : folder.startsWith('src-main/engine')
          ? 2
          : folder.startsWith('src-main/node') || folder.startsWith('src-renderer')
            ? 3
            : folder.startsWith('src-main/electron')
              ? 4
              : 0;
    const bad: string[] = [];
    for (const [from, tos] of graph)
      for (const to of tos) {
        const up =
          rank(to) > rank(from) || (from.startsWith('src-renderer') && to.startsWith('src-main/node'));
        if (up) bad.push(`${from} imports ${to}`);
      }
    expect(bad).toEqual([]);
  });

  it(`has no source file over ${MAX_LINES} lines`, () => {
    const long = SOURCE_DIRS.flatMap(sourceFiles)
      .filter((f) => !isKernel(f))
      .map((f) => ({ f, n: readFileSync(join(repoRoot, f), 'utf8').split('\n').length }))
      .filter(({ n }) => n > MAX_LINES)
      .map(({ f, n }) => `${f}: ${n} lines`);
    expect(long).toEqual([]);
  });

  it(`has at most ${MAX_COPIES} copied regions in src-main`, () => {
    const regions = copiedRegions(sourceFiles('src-main').filter((f) => !isKernel(f)));
    expect(regions.length, regions.map((r) => `${r.a} ~ ${r.b}`).join('\n')).toBeLessThanOrEqual(MAX_COPIES);
  });
});
