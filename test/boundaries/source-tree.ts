// Reads the source tree for the structure tests: files, their relative imports, the folder graph
// and repeated runs of lines. Text only; nothing here runs project code.
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { repoRoot } from '../helpers/fixtures';

/** AssemblyScript kernel sources (src-main/engine/<area>/wasm/assembly/): exempt from the line and copy limits. */
export const isKernel = (f: string) => /^src-main\/engine\/[^/]+\/wasm\/assembly\//.test(f);

export function sourceFiles(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(join(repoRoot, dir))) {
    const rel = `${dir}/${name}`;
    if (name === 'node_modules') continue;
    if (statSync(join(repoRoot, rel)).isDirectory()) out.push(...sourceFiles(rel));
    else if (/\.(ts|mts|js|mjs)$/.test(name) && !name.endsWith('.d.ts')) out.push(rel);
  }
  return out;
}

const importRe =
  /(?:^|\n)\s*(?:import|export)\s[^'";]*?from\s*['"](\.[^'"]+)['"]|import\s*\(\s*['"](\.[^'"]+)['"]\s*\)/g;

/** The repository-relative folders a file imports from (relative imports only, own folder left out). */
function importedFolders(file: string): string[] {
  const text = readFileSync(join(repoRoot, file), 'utf8');
  const out = new Set<string>();
  for (const m of text.matchAll(importRe)) {
    const spec = m[1] ?? m[2];
    const target = relative(repoRoot, resolve(repoRoot, dirname(file), spec));
    const folder = isFolderSpec(target) ? target : dirname(target);
    if (folder !== dirname(file)) out.add(folder);
  }
  return [...out];
}

function isFolderSpec(target: string): boolean {
  try {
    return statSync(join(repoRoot, target)).isDirectory();
  } catch {
    return false;
  }
}

/** Folder → folders it imports, over every source file below `dirs`. */
export function folderGraph(dirs: string[]): Map<string, Set<string>> {
  const graph = new Map<string, Set<string>>();
  for (const dir of dirs)
    for (const f of sourceFiles(dir)) {
      const from = dirname(f);
      const edges = graph.get(from) ?? new Set<string>();
      for (const to of importedFolders(f)) edges.add(to);
      graph.set(from, edges);
    }
  return graph;
}

/** Every cycle's folders (strongly connected components with more than one folder). */
export function folderCycles(graph: Map<string, Set<string>>): string[][] {
  let index = 0;
  const idx = new Map<string, number>();
  const low = new Map<string, number>();
  const stack: string[] = [];
  const onStack = new Set<string>();
  const out: string[][] = [];
  const visit = (v: string): void => {
    idx.set(v, index);
    low.set(v, index++);
    stack.push(v);
    onStack.add(v);
    for (const w of graph.get(v) ?? []) {
      if (!idx.has(w)) {
        visit(w);
        low.set(v, Math.min(low.get(v) as number, low.get(w) as number));
      } else if (onStack.has(w)) low.set(v, Math.min(low.get(v) as number, idx.get(w) as number));
    }
    if (low.get(v) === idx.get(v)) {
      const comp: string[] = [];
      let w: string;
      do {
        w = stack.pop() as string;
        onStack.delete(w);
        comp.push(w);
      } while (w !== v);
      if (comp.length > 1) out.push(comp.sort());
    }
  };
  for (const v of graph.keys()) if (!idx.has(v)) visit(v);
  return out;
}

/**
 * Lines as the copy check sees them: comments, blank lines, lone punctuation and import lines are
 * passed over and white space is folded (the rules of the workplace's `duplicates` tool, which also
 * pairs runs alike but for names; this check pairs identical runs only).
 */
function codeLines(file: string): { line: number; text: string }[] {
  const raw = readFileSync(join(repoRoot, file), 'utf8').replace(/\/\*[\s\S]*?\*\//g, (c) =>
    c.replace(/[^\n]/g, ''),
  );
  const out: { line: number; text: string }[] = [];
  raw.split('\n').forEach((l, i) => {
    const text = l
      .replace(/\/\/.*$/, '')
      .replace(/\s+/g, ' ')
      .trim();
    if (!text || /^[\s{}()[\];,]*$/.test(text) || /^(import|export \{.*\} from|\} from)/.test(text)) return;
    out.push({ line: i + 1, text });
  });
  return out;
}

export interface CopiedRegion {
  a: string;
  b: string;
}

/** Pairs of places that share a run of `min` or more identical code lines (one row per file pair and place). */
export function copiedRegions(files: string[], min = 6): CopiedRegion[] {
  const seen = new Map<string, { file: string; at: number }[]>();
  const lines = new Map(files.map((f) => [f, codeLines(f)]));
  for (const [file, ls] of lines)
    for (let i = 0; i + min <= ls.length; i++) {
      const key = ls
        .slice(i, i + min)
        .map((l) => l.text)
        .join('\n');
      const list = seen.get(key) ?? [];
      list.push({ file, at: i });
      seen.set(key, list);
    }
  const pairs = new Map<string, CopiedRegion>();
  for (const list of seen.values()) {
    if (list.length < 2 || list.length > 8) continue;
    for (let i = 0; i < list.length; i++)
      for (let j = i + 1; j < list.length; j++) {
        const [p, q] = [list[i], list[j]];
        if (p.file === q.file && Math.abs(p.at - q.at) < min) continue;
        const la = lines.get(p.file)?.[p.at].line;
        const lb = lines.get(q.file)?.[q.at].line;
        // One row per pair of places: runs that continue one another fold into the first.
        const key = `${p.file}~${q.file}~${p.at - q.at}`;
        if (!pairs.has(key)) pairs.set(key, { a: `${p.file}:${la}`, b: `${q.file}:${lb}` });
      }
  }
  return [...pairs.values()];
}
