/**
 * The app's Batch panel through the back end (the same calls IPC and HTTP carry): a total for the folder,
 * its plan-only run that writes nothing and returns each file's predicted PSNR (the panel's histogram), an
 * output folder that does not exist yet (chosen as a new folder and created by the run, as the CLI does;
 * issue #14), and a progress event for each file as it starts.
 */
import { existsSync, mkdtempSync, readdirSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { BatchResult, PickResult, ProgressEvent } from '../../src-main/contract';
import { Backend } from '../../src-main/node/server/backend';
import { writePage } from '../batch/images';
import { repoRoot } from '../helpers/fixtures';

const root = mkdtempSync(join(tmpdir(), 'rankfold-batch-total-'));
const backend = new Backend({ workersDir: join(repoRoot, 'dist', 'workers') });
afterAll(() => backend.close());

describe('batch with a total, from the app', () => {
  it('plans without writing, then fits the folder into the total in a folder it creates', async () => {
    const inDir = join(root, 'in');
    for (let i = 0; i < 3; i++) await writePage(join(inDir, `page-${i}.png`), 96, 64, i + 1);
    const input = ((await backend.call('pick', { kind: 'folder', suggested: inDir })) as PickResult).path!;
    const out = join(root, 'new-out');
    // The panel tries a folder first; a folder that does not exist is offered as a new one.
    await expect(backend.call('pick', { kind: 'folder', suggested: out })).rejects.toThrow('does not exist');
    const output = ((await backend.call('pick', { kind: 'save', suggested: out })) as PickResult).path!;
    const base = { input, output, budget: { kind: 'percent', percent: 5 }, tile: 32 };
    const plan = (await backend.call('batch', {
      ...base,
      job: 'plan1',
      total: { kind: 'bytes', bytes: 6000 },
      dryRun: true,
    })) as BatchResult;
    expect(existsSync(out)).toBe(false);
    expect(plan.files).toHaveLength(3);
    for (const f of plan.files) {
      expect(f.state).toBe('queued');
      expect(f.psnr).toBeGreaterThan(10);
    }
    const events: ProgressEvent[] = [];
    backend.on('progress', (e: ProgressEvent) => events.push(e));
    const r = (await backend.call('batch', {
      ...base,
      job: 'run1',
      total: { kind: 'bytes', bytes: 6000 },
    })) as BatchResult;
    expect(r.files.map((f) => f.state)).toEqual(['done', 'done', 'done']);
    const rkf = readdirSync(out).filter((f) => f.endsWith('.rkf'));
    expect(rkf).toHaveLength(3);
    expect(rkf.reduce((s, f) => s + statSync(join(out, f)).size, 0)).toBeLessThanOrEqual(6000);
    // A row per file as it starts, before its result.
    for (const f of r.files) {
      const started = events.findIndex((e) => e.file === f.file && e.stage === 'running');
      const finished = events.findIndex((e) => e.file === f.file && e.stage === 'done');
      expect(started, f.file).toBeGreaterThanOrEqual(0);
      expect(started).toBeLessThan(finished);
    }
  });
});
