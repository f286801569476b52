// docs/scale.md: every documented `rankfold batch` invocation parses with the CLI's own parser, and the
// shards each scheduler would start are exactly 0…N−1, once each.
// Scheduler facts (from memory, documented by each project): GNU parallel substitutes {} with each value of
// the ::: list; SLURM sets SLURM_ARRAY_TASK_ID to each index of --array=A-B and SLURM_ARRAY_TASK_COUNT to
// the number of tasks; Kubernetes sets JOB_COMPLETION_INDEX to 0…completions−1 for completionMode: Indexed.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { type ParsedBatch, parseBatchArgs } from '../../src-main/node/cli/args/batch-args';
import { repoRoot } from '../helpers/fixtures';

const doc = readFileSync(join(repoRoot, 'docs', 'scale.md'), 'utf8');

function section(title: string): string {
  const start = doc.indexOf(`## ${title}`);
  expect(start, `docs/scale.md has a section "${title}"`).toBeGreaterThanOrEqual(0);
  const next = doc.indexOf('\n## ', start + 3);
  return doc.slice(start, next < 0 ? undefined : next);
}

function codeBlocks(text: string): string[] {
  return [...text.matchAll(/```(?:sh|yaml)\n([\s\S]*?)```/g)].map((m) => m[1].replace(/\\\n\s*/g, ''));
}

/** Shell words of the `rankfold batch …` command starting at `at`, up to `||`, `>`, `;`, `&&` or an unmatched quote. */
function wordsFrom(line: string, at: number, env: Record<string, string>): string[] {
  const words: string[] = [];
  let cur = '';
  let has = false;
  let q: string | null = null;
  const expand = (s: string) =>
    s.replace(/\$\{?([A-Z_]+)\}?/g, (_m, v: string) => env[v] ?? `$${v}`).replace(/\{\}/g, env['{}'] ?? '{}');
  for (let i = at; i < line.length; i++) {
    const c = line[i];
    if (q) {
      if (c === q) q = null;
      else cur += c;
      continue;
    }
    if (c === '"' || c === "'") {
      // An opening quote with no partner on the line closes an outer quoted string (GNU parallel's argument).
      if (line.indexOf(c, i + 1) < 0) break;
      q = c;
      has = true;
      continue;
    }
    if (/\s/.test(c)) {
      if (has || cur) words.push(expand(cur));
      cur = '';
      has = false;
      continue;
    }
    if (c === '>' || c === ';' || line.startsWith('||', i) || line.startsWith('&&', i)) break;
    cur += c;
  }
  if (has || cur) words.push(expand(cur));
  return words;
}

function invocations(block: string, env: Record<string, string>): string[][] {
  const out: string[][] = [];
  for (const line of block.split('\n')) {
    let at = line.indexOf('rankfold batch');
    while (at >= 0) {
      out.push(wordsFrom(line, at, env).slice(2));
      at = line.indexOf('rankfold batch', at + 1);
    }
  }
  return out;
}

function runShards(argvs: string[][]): { index: number; count: number }[] {
  return argvs
    .map((a) => parseBatchArgs(a))
    .filter((p): p is ParsedBatch => p.mode === 'run')
    .map((p) => p.shard);
}

function expectPartition(shards: { index: number; count: number }[], n: number) {
  expect(shards.every((s) => s.count === n)).toBe(true);
  expect(shards.map((s) => s.index).sort((a, b) => a - b)).toEqual(Array.from({ length: n }, (_, i) => i));
}

describe('docs/scale.md invocations', () => {
  it('GNU parallel: the ::: list gives shards 0…N−1 and the merge parses', () => {
    const [block] = codeBlocks(section('GNU parallel'));
    const list = /:::\s*([\d ]+)/.exec(block)![1].trim().split(/\s+/);
    const shards = runShards(
      list.flatMap((v) => invocations(block, { '{}': v }).filter((a) => !a.includes('--merge'))),
    );
    expectPartition(shards, 4);
    const merges = invocations(block, {})
      .filter((a) => a.includes('--merge'))
      .map((a) => parseBatchArgs(a));
    expect(merges).toHaveLength(1);
    expect(merges[0].mode).toBe('merge');
  });

  it('SLURM array: --array=A-B with SLURM_ARRAY_TASK_COUNT gives shards 0…N−1', () => {
    const [script, submit] = codeBlocks(section('SLURM job array'));
    const [, a, b] = /#SBATCH --array=(\d+)-(\d+)/.exec(script)!.map(Number);
    const cpus = /#SBATCH --cpus-per-task=(\d+)/.exec(script)![1];
    const count = String(b - a + 1);
    const argvs: string[][] = [];
    for (let i = a; i <= b; i++)
      argvs.push(
        ...invocations(script, {
          SLURM_ARRAY_TASK_ID: String(i),
          SLURM_ARRAY_TASK_COUNT: count,
          SLURM_CPUS_PER_TASK: cpus,
        }),
      );
    const parsed = argvs.map((x) => parseBatchArgs(x) as ParsedBatch);
    expectPartition(
      parsed.map((p) => p.shard),
      b - a + 1,
    );
    expect(parsed.every((p) => p.resume && p.jobs === Number(cpus))).toBe(true);
    const merge = invocations(submit, {}).map((x) => parseBatchArgs(x));
    expect(merge.map((m) => m.mode)).toEqual(['merge']);
    expect(submit).toContain(`of${count}.jsonl`);
  });

  it('Kubernetes Indexed Job: completions N and JOB_COMPLETION_INDEX give shards 0…N−1', () => {
    const [yaml, merge] = codeBlocks(section('Kubernetes Indexed Job'));
    expect(yaml).toMatch(/^\s*completionMode: Indexed$/m);
    expect(yaml).toMatch(/^\s*restartPolicy: Never$/m);
    const n = Number(/^\s*completions: (\d+)$/m.exec(yaml)![1]);
    const argvs: string[][] = [];
    for (let i = 0; i < n; i++) argvs.push(...invocations(yaml, { JOB_COMPLETION_INDEX: String(i) }));
    expectPartition(runShards(argvs), n);
    expect(invocations(merge, {}).map((x) => parseBatchArgs(x).mode)).toEqual(['merge']);
  });

  it('A total across machines: survey and encode shards are 0…N−1, the plan reads every survey, the merge parses', () => {
    const [block] = codeBlocks(section('A total across machines'));
    const list = /:::\s*([\d ]+)/.exec(block)![1].trim().split(/\s+/);
    const parsed = list.flatMap((v) => invocations(block, { '{}': v }).map((a) => parseBatchArgs(a)));
    const runs = parsed.filter((p): p is ParsedBatch => p.mode === 'run');
    expectPartition(
      runs.filter((p) => p.surveyOnly).map((p) => p.shard),
      4,
    );
    expectPartition(
      runs.filter((p) => p.planFile).map((p) => p.shard),
      4,
    );
    const once = invocations(block, {})
      .filter((a) => !a.some((w) => w.includes('{}')))
      .map((a) => parseBatchArgs(a));
    const plan = once.find((p) => p.mode === 'plan');
    expect(plan && plan.mode === 'plan' ? plan.surveys.map((f) => f.split('/').pop()) : []).toEqual(
      list.map((i) => `rankfold-survey-${i}of4.json`),
    );
    expect(once.map((p) => p.mode)).toEqual(['plan', 'merge']);
  });

  it('the parser rejects a shard the documents would get wrong (1-based index N/N)', () => {
    expect(() => parseBatchArgs(['/a', '-o', '/b', '--rank', '5', '--shard', '4/4'])).toThrow(
      'shards count from 0',
    );
  });
});
