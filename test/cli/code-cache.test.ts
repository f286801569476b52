// The script bundles' V8 code cache (src-main/node/boot/code-cache.ts, built as dist/boot.cjs): the warm-up writes
// one, a later start uses it, and a missing, stale or damaged one only means the bundle compiles as before. Each
// case runs in a fresh `node` (a cache fits the V8 flags of the process that wrote it; vitest's may differ).
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { repoRoot } from '../helpers/fixtures';

const boot = join(repoRoot, 'dist', 'boot.cjs');
const dir = mkdtempSync(join(tmpdir(), 'rankfold-code-cache-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
beforeAll(() => {
  // Built by `npm run build` (npm test builds first).
  expect(existsSync(boot)).toBe(true);
});

/** Run `file` through the loader in a fresh node: what its exports' `value` is, and what became of its cache. */
function start(file: string, write = false): { value: unknown; cache: string } {
  const code = `const r = require(${JSON.stringify(boot)}).runBundle(${JSON.stringify(file)});
process.stdout.write(JSON.stringify({ value: r.exports.value, cache: r.cache }));`;
  const env = { ...process.env, RANKFOLD_WRITE_CODE_CACHE: write ? '1' : '' };
  return JSON.parse(execFileSync(process.execPath, ['-e', code], { env, encoding: 'utf8' }));
}

/** A small bundle as scripts/build.mjs writes one: the stamp on its first line, then CommonJS code. */
function bundle(name: string, stamp: string, value: number): string {
  const file = join(dir, `${name}.cjs`);
  const body = `function add(a, b) { return a + b; }\nmodule.exports = { value: add(${value}, 1), file: __filename };\n`;
  writeFileSync(file, `"use strict";/*rankfold-build:${stamp}*/\n${body}`);
  return file;
}

describe('V8 code cache of a script bundle', () => {
  it('runs a bundle without a cache, and the warm-up writes one stamped with the build, which the next start uses', () => {
    const file = bundle('a', '0123456789abcdef', 41);
    expect(start(file)).toEqual({ value: 42, cache: 'none' });
    expect(existsSync(`${file}.v8cache`)).toBe(false);
    expect(start(file, true)).toEqual({ value: 42, cache: 'none' });
    const cache = readFileSync(`${file}.v8cache`);
    expect(cache.toString('latin1', 0, 17)).toBe('0123456789abcdef\n');
    expect(cache.length).toBeGreaterThan(17);
    expect(start(file)).toEqual({ value: 42, cache: 'used' });
  });

  it("ignores a cache of another build, even one of the same length (V8's own check is the length)", () => {
    const file = bundle('b', '0123456789abcdef', 41);
    start(file, true);
    // Rebuilt with other code of the same length and a new stamp; the old cache left beside it.
    bundle('b', 'fedcba9876543210', 51);
    expect(start(file)).toEqual({ value: 52, cache: 'none' });
  });

  it('runs the bundle when the cache is damaged (V8 refuses it) or unreadable', () => {
    const file = bundle('c', '00000000000000aa', 1);
    start(file, true);
    const cache = readFileSync(`${file}.v8cache`);
    writeFileSync(`${file}.v8cache`, cache.subarray(0, cache.length >> 1));
    expect(start(file)).toEqual({ value: 2, cache: 'refused' });
    rmSync(`${file}.v8cache`);
    writeFileSync(`${file}.v8cache`, '');
    expect(start(file)).toEqual({ value: 2, cache: 'none' });
  });

  it('writes no cache for a bundle without a stamp', () => {
    const file = join(dir, 'plain.cjs');
    writeFileSync(file, 'module.exports = { value: 7 };\n');
    expect(start(file, true)).toEqual({ value: 7, cache: 'none' });
    expect(existsSync(`${file}.v8cache`)).toBe(false);
  });

  // (The side worker's bundle, built and warmed the same way, runs only as a worker thread.)
  it("has the build's caches of the CLI and its early module fit this Node", () => {
    for (const name of ['cli', 'early'])
      expect(start(join(repoRoot, 'dist', `${name}.cjs`)).cache, name).toBe('used');
  });
});
