/**
 * Running the built `rankfold batch` (bin/rankfold.mjs → dist/cli.js + dist/workers/batch.js) in tests, and
 * reading what it wrote. Shared by the batch end-to-end tests and the hostile-input campaign.
 */
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import type { BatchRow } from '../../src-main/contract';
import { repoRoot } from '../helpers/fixtures';
import { writePage } from './images';

export const cli = join(repoRoot, 'bin', 'rankfold.mjs');
export const built =
  existsSync(join(repoRoot, 'dist', 'cli.js')) && existsSync(join(repoRoot, 'dist', 'workers', 'batch.js'));
export const isRoot = process.getuid?.() === 0;
/** Small, fast settings: 32-pixel tiles at a fixed rank. */
export const BUDGET = ['--rank', '6', '--tile', '32'];

/** `rankfold batch ARGS…`, waited for. `timeoutMs` kills a run that hangs (a FIFO opened by mistake). */
export function runBatchCli(args: string[], timeoutMs?: number) {
  const r = spawnSync(process.execPath, [cli, 'batch', ...args], {
    encoding: 'utf8',
    env: { ...process.env, FORCE_COLOR: '0' },
    timeout: timeoutMs,
  });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr, signal: r.signal };
}

export function jsonLines(stdout: string): Record<string, unknown>[] {
  return stdout
    .split('\n')
    .filter((l) => l.trim())
    .map((l) => JSON.parse(l));
}

/** Regular files under `dir`, relative and '/'-separated, sorted. Special files are never listed (or read). */
export function filesUnder(dir: string): string[] {
  const out: string[] = [];
  const visit = (d: string) => {
    for (const e of readdirSync(d, { withFileTypes: true })) {
      const p = join(d, e.name);
      if (e.isDirectory()) visit(p);
      else if (e.isFile()) out.push(relative(dir, p).split('\\').join('/'));
    }
  };
  if (existsSync(dir)) visit(dir);
  return out.sort();
}

export function hashTree(dir: string, filter: (rel: string) => boolean = () => true): Record<string, string> {
  const out: Record<string, string> = {};
  for (const f of filesUnder(dir).filter(filter))
    out[f] = createHash('sha256')
      .update(readFileSync(join(dir, f)))
      .digest('hex');
  return out;
}

export const rkfOnly = (f: string) => f.endsWith('.rkf') && !f.split('/').pop()!.startsWith('.');

export function manifestRows(file: string): BatchRow[] {
  return readFileSync(file, 'utf8')
    .split('\n')
    .filter((l) => l.trim())
    .map((l) => JSON.parse(l));
}

/** `count` small ledger pages in box-0…box-2. */
export async function goodSet(dir: string, count: number, w = 96, h = 64) {
  for (let i = 0; i < count; i++)
    await writePage(join(dir, `box-${i % 3}`, `page-${String(i).padStart(2, '0')}.png`), w, h, i + 1);
}
