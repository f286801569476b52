// `rankfold batch` relaunches itself with V8 flags that keep garbage collection and optimising compiles on
// each job's own thread (one job = one core; measured in docs/benchmarks.md, "Batch throughput").
import { spawn } from 'node:child_process';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import {
  BATCH_V8_FLAGS,
  needsBatchRelaunch,
  RELAUNCHED_ENV,
  relaunch,
} from '../../src-main/node/cli/relaunch';
import { writePage } from '../batch/images';
import { repoRoot } from '../helpers/fixtures';

const cli = join(repoRoot, 'dist', 'cli.js');

/** Command lines (NUL-separated arguments) of the processes whose command line mentions `needle`. */
function processesWith(needle: string): string[][] {
  return readdirSync('/proc')
    .filter((d) => /^\d+$/.test(d))
    .flatMap((d) => {
      try {
        const args = readFileSync(`/proc/${d}/cmdline`, 'utf8').split('\0');
        return args.some((a) => a.includes(needle)) ? [args] : [];
      } catch {
        return [];
      }
    });
}

describe('batch relaunch', () => {
  it('relaunches only a batch that runs jobs, and only once', () => {
    expect(needsBatchRelaunch(['batch', 'in', '-o', 'out'], [], {})).toBe(true);
    expect(needsBatchRelaunch(['batch', 'in', '-o', 'out'], [...BATCH_V8_FLAGS], {})).toBe(false);
    expect(needsBatchRelaunch(['batch', 'in', '-o', 'out'], [], { [RELAUNCHED_ENV]: '1' })).toBe(false);
    for (const extra of ['--help', '-h', '--dry-run', '--merge'])
      expect(needsBatchRelaunch(['batch', extra, 'x'], [], {})).toBe(false);
    expect(needsBatchRelaunch(['compress', 'a.png', '-o', 'a.rkf'], [], {})).toBe(false);
    expect(needsBatchRelaunch([], [], {})).toBe(false);
  });

  it('runs the batch in this process when no second process can be started', async () => {
    let ran = 0;
    const code = await relaunch(
      'script.js',
      ['batch'],
      BATCH_V8_FLAGS,
      async () => {
        ran++;
        return 2;
      },
      join(tmpdir(), 'no-such-node-binary'),
    );
    expect(ran).toBe(1);
    expect(code).toBe(2);
  });

  it.skipIf(!existsSync(cli) || !existsSync('/proc'))(
    'the jobs run in a process started with the flags; its output and exit code come through the launcher',
    async () => {
      const root = await mkdtemp(join(tmpdir(), 'rankfold-relaunch-'));
      try {
        for (let i = 0; i < 3; i++) await writePage(join(root, 'in', `p${i}.png`), 160, 120, i + 1);
        const out = join(root, 'out');
        const child = spawn(
          process.execPath,
          [cli, 'batch', join(root, 'in'), '-o', out, '--bpp', '1', '--json'],
          {
            stdio: ['ignore', 'pipe', 'pipe'],
          },
        );
        let stdout = '';
        let seen: string[][] = [];
        child.stdout.on('data', (c: Buffer) => {
          stdout += c.toString();
          // While the batch runs: the launcher (no flags) and the batch process (with them).
          if (!seen.length && stdout.includes('"event":"start"')) seen = processesWith(out);
        });
        const code = await new Promise<number | null>((resolve) => child.on('exit', (c) => resolve(c)));
        expect(code).toBe(0);
        expect(stdout.match(/"event":"file"/g)).toHaveLength(3);
        const withFlags = seen.filter((args) => BATCH_V8_FLAGS.every((f) => args.includes(f)));
        expect(withFlags, JSON.stringify(seen)).toHaveLength(1);
        expect(seen).toHaveLength(2);

        // A usage error is found by the batch process: exit 1 and its message come through the launcher.
        const bad = spawn(
          process.execPath,
          [cli, 'batch', join(root, 'no-such-folder'), '-o', out, '--bpp', '1'],
          {
            stdio: ['ignore', 'pipe', 'pipe'],
          },
        );
        let err = '';
        bad.stderr.on('data', (c: Buffer) => {
          err += c.toString();
        });
        expect(await new Promise((resolve) => bad.on('exit', resolve))).toBe(1);
        expect(err).toContain('no-such-folder');
      } finally {
        await rm(root, { recursive: true, force: true });
      }
    },
    60_000,
  );
});
