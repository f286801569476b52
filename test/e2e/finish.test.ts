/**
 * Issue 14, second half, at 1440×900: the opening rank and why, what Save will write (and the removed
 * part), progress in plain words with a Cancel that frees the worker, the app's own advice in place of CLI
 * flags, the Tile ranks view in whole-plane mode, and `serve --port 0`. Screenshots in test-artifacts/.
 *
 * Outside references:
 * - numpy 1.24.2 linalg.svd (LAPACK dgesdd) PSNR of the optimal rank-k truncation of moon.png,
 *   test/fixtures/reference/rank_approx_images.json: 34.27 dB at k = 10, 36.92 dB at k = 20, so the
 *   smallest rank reaching 35 dB lies in 11–20 (Eckart–Young–Mirsky);
 * - PNG signature, ISO/IEC 15948:2004 §5.2 (bytes 89 50 4E 47 0D 0A 1A 0A).
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { beforeAll, describe, expect, it } from 'vitest';
import { image } from '../helpers/fixtures';
import { readouts, serve, shot } from './harness';
import { appForSuite } from './suite';

declare const document: {
  getElementById(
    id: string,
  ): { dataset: Record<string, string | undefined>; textContent: string | null } | null;
  body: { dataset: Record<string, string | undefined> };
};

const suite = appForSuite([image('moon.png')]);
let page: Page;
beforeAll(() => {
  page = suite.page;
});

async function waitExactRank(rank: number, timeout = 30_000) {
  await page.waitForFunction(
    (k) => {
      const box = document.getElementById('readouts');
      return box?.dataset.state === 'exact' && box.dataset.rank === String(k);
    },
    rank,
    { timeout },
  );
}

/** The status line's texts while `until` is not yet true (sampled every 50 ms). */
async function statusWhile(until: () => Promise<boolean>, timeout = 30_000): Promise<string[]> {
  const seen: string[] = [];
  const t0 = Date.now();
  while (!(await until())) {
    if (Date.now() - t0 > timeout) throw new Error(`timed out; status was: ${seen.slice(-3).join(' | ')}`);
    seen.push((await page.textContent('#status-text')) ?? '');
    await page.waitForTimeout(50);
  }
  return seen;
}

describe('opening, saving, progress and messages (1440×900)', () => {
  it('opens at the smallest rank that reaches 35 dB and says why', async () => {
    await page.getByRole('button', { name: 'moon', exact: true }).click();
    await page.waitForSelector('body[data-refined]', { timeout: 60_000 });
    const k = Number(await page.getAttribute('body', 'data-opening-rank'));
    expect(await page.getAttribute('body', 'data-opening-why')).toBe('reached');
    expect(k).toBeGreaterThan(10);
    expect(k).toBeLessThanOrEqual(20);
    await waitExactRank(k);
    expect(await page.getByRole('slider', { name: 'Rank' }).inputValue()).toBe(String(k));
    expect((await readouts(page)).rank).toBe(k);
    const why = await page.textContent('#rank-why');
    expect(why).toContain(`rank ${k}`);
    expect(why).toContain('35 dB');
    await shot(page, 'e2e-finish-1440-opened');
  });

  it('Save says what it will write, exactly when the budget was encoded', async () => {
    const k = Number(await page.getAttribute('body', 'data-opening-rank'));
    const bytes = (await readouts(page)).bytes;
    await page.getByRole('tab', { name: 'Save' }).click();
    const plan = await page.textContent('#save-plan');
    expect(plan).toContain('moon.rkf');
    expect(plan).toContain(`rank ${k}`);
    expect(plan).toContain(`${(bytes / 1e3).toFixed(1)} kB exactly`);
    await shot(page, 'e2e-finish-1440-save-plan');
  });

  it('saves the removed part as a PNG download', async () => {
    await page.getByRole('radio', { name: /the part cleaning removed/ }).check();
    expect(await page.textContent('#save-plan')).toContain('moon-removed.png');
    const download = page.waitForEvent('download', { timeout: 60_000 });
    await page.getByRole('button', { name: 'Save', exact: true }).click();
    const d = await download;
    expect(d.suggestedFilename()).toBe('moon-removed.png');
    const file = await d.path();
    expect([...readFileSync(file).subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
    expect(await page.textContent('#save-caution')).toContain('cleaning alters pixel data');
    await page.getByRole('radio', { name: /compressed \.rkf/ }).check();
  });

  it('an existing file is refused with the app’s advice, never a CLI flag', async () => {
    const target = join(mkdtempSync(join(tmpdir(), 'rankfold-e2e-exists-')), 'moon.rkf');
    writeFileSync(target, 'keep me');
    await page.getByRole('textbox', { name: 'Save to path' }).fill(target);
    await page.getByRole('button', { name: 'Save', exact: true }).click();
    await page.waitForSelector('#status-text[data-error]', { timeout: 30_000 });
    const alert = (await page.getByRole('alert').textContent()) ?? '';
    expect(alert).toContain('already exists');
    expect(alert).toContain('tick “replace an existing file” in Save');
    expect(alert).not.toMatch(/--[a-z]/);
    expect(readFileSync(target, 'utf8')).toBe('keep me');
    await page.getByRole('button', { name: 'Dismiss message' }).click();
    await page.getByRole('textbox', { name: 'Save to path' }).fill('');
  });

  it('a dB budget shows a determinate bar in plain words, with the time left, never a stage name', async () => {
    await page.getByRole('textbox', { name: 'Budget' }).fill('42 dB');
    await page.getByRole('textbox', { name: 'Budget' }).press('Enter');
    let shotTaken = false;
    const seen = await statusWhile(async () => {
      if (!shotTaken && (await page.isVisible('#status-progress'))) {
        shotTaken = true;
        expect(await page.getAttribute('#status-progress', 'value')).not.toBeNull();
        await shot(page, 'e2e-finish-1440-progress');
      }
      return page.evaluate(() => {
        const b = document.getElementById('readouts');
        return b?.dataset.state === 'exact' && JSON.parse(b.dataset.budget ?? '{}').kind === 'psnr';
      });
    });
    const running = seen.filter((t) => t.startsWith('Finding the smallest file ≥ 42 dB'));
    expect(running.length).toBeGreaterThan(0);
    for (const t of running) expect(t).toMatch(/\d+ %/);
    for (const t of seen) expect(t).not.toMatch(/\(\d+\/\d+\)|\bfactor\b|\bprobe\b|\ballocate\b/);
    expect((await readouts(page)).psnr).toBeGreaterThanOrEqual(42);
  });

  it('Tile ranks in whole-plane mode says why it is empty', async () => {
    await page.getByRole('button', { name: 'Tile ranks' }).click();
    expect(await page.textContent('#label-right')).toContain('whole planes');
    await shot(page, 'e2e-finish-1440-tile-ranks-whole-plane');
    await page.getByRole('button', { name: 'Side by side' }).click();
  });

  it('raised no errors in the page', () => {
    expect(suite.app.pageErrors).toEqual([]);
  });
});

describe('serve --port 0', () => {
  it('listens on a free port and prints the real address', async () => {
    const s = await serve({}, ['--port', '0']);
    try {
      const port = Number(new URL(s.url).port);
      expect(port).toBeGreaterThan(0);
      expect((await fetch(s.url)).status).toBe(200);
      expect(s.stderr()).toContain(`127.0.0.1:${port}`);
    } finally {
      await s.stop();
    }
  });
});
