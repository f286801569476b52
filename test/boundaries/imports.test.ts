// Import boundaries (docs: ARCHITECTURE layers). The engine is pure; the page sees only the contract and
// the engine; only src-main/electron imports 'electron'. The per-folder tsconfig files enforce the same
// at type-check time (no Node types and no DOM lib for the engine).
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { repoRoot } from '../helpers/fixtures';

function sources(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    if (name === 'assembly' || name === 'node_modules') continue;
    if (statSync(p).isDirectory()) out.push(...sources(p));
    else if (/\.(ts|tsx|mts|js|mjs)$/.test(name) && !name.endsWith('.d.ts')) out.push(p);
  }
  return out;
}

const importRe =
  /(?:import|export)\s[^'"]*?from\s*['"]([^'"]+)['"]|import\s*\(\s*['"]([^'"]+)['"]\s*\)|require\(\s*['"]([^'"]+)['"]\s*\)/g;
function importsOf(file: string): string[] {
  const text = readFileSync(file, 'utf8');
  const out: string[] = [];
  for (const m of text.matchAll(importRe)) out.push(m[1] ?? m[2] ?? m[3]);
  return out;
}

const nodeBuiltins =
  /^(node:|fs$|path$|os$|crypto$|worker_threads$|child_process$|http$|url$|util$|zlib$|stream$|buffer$)/;

describe('import boundaries', () => {
  it('src-main/engine imports nothing from Node, Electron, the DOM or other layers', () => {
    const engine = join(repoRoot, 'src-main', 'engine');
    const bad: string[] = [];
    for (const f of sources(engine)) {
      for (const spec of importsOf(f)) {
        const outside =
          spec.startsWith('.') &&
          !resolve(dirname(f), spec).startsWith(engine) &&
          !resolve(dirname(f), spec).startsWith(join(repoRoot, 'src-main', 'contract'));
        if (
          nodeBuiltins.test(spec) ||
          spec === 'electron' ||
          outside ||
          (!spec.startsWith('.') && spec !== 'ml-matrix')
        )
          bad.push(`${relative(repoRoot, f)} imports ${spec}`);
      }
      const text = readFileSync(f, 'utf8');
      if (
        /\b(document|window|process|Buffer|require)\s*[.(]/.test(
          text.replace(/\/\/.*$|\/\*[\s\S]*?\*\//gm, ''),
        )
      )
        bad.push(`${relative(repoRoot, f)} uses a Node or DOM global`);
    }
    expect(bad).toEqual([]);
  });

  it('src-renderer imports only src-main/contract and src-main/engine (and its own files)', () => {
    const page = join(repoRoot, 'src-renderer');
    const allowed = [join(repoRoot, 'src-main', 'contract'), join(repoRoot, 'src-main', 'engine'), page];
    const bad: string[] = [];
    for (const f of sources(page)) {
      for (const spec of importsOf(f)) {
        if (spec.startsWith('.')) {
          const target = resolve(dirname(f), spec);
          if (!allowed.some((a) => target.startsWith(a)))
            bad.push(`${relative(repoRoot, f)} imports ${spec}`);
        } else if (nodeBuiltins.test(spec) || spec === 'electron' || spec === 'sharp')
          bad.push(`${relative(repoRoot, f)} imports ${spec}`);
      }
    }
    expect(bad).toEqual([]);
  });

  it("only src-main/electron imports 'electron'", () => {
    const bad: string[] = [];
    for (const dir of ['src-main/contract', 'src-main/engine', 'src-main/node', 'src-renderer']) {
      for (const f of sources(join(repoRoot, dir)))
        if (importsOf(f).includes('electron')) bad.push(relative(repoRoot, f));
    }
    expect(bad).toEqual([]);
  });

  it('src-main/contract imports nothing outside itself', () => {
    const contract = join(repoRoot, 'src-main', 'contract');
    const bad = sources(contract).flatMap((f) =>
      importsOf(f)
        .filter((s) => !s.startsWith('.') || !resolve(dirname(f), s).startsWith(contract))
        .map((s) => `${relative(repoRoot, f)} imports ${s}`),
    );
    expect(bad).toEqual([]);
  });
});
