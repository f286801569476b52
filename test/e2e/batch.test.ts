/**
 * The Batch panel with three scans (issue 14, "Progress"): a row appears for each file as it starts, before
 * the batch ends; the status line says which file of how many is running, with a determinate bar, the
 * time left and a Cancel button; the output folder, three levels of folders that do not exist yet, is
 * created (as `rankfold batch` does); at the end every row reads done and the outputs are there.
 */
import { existsSync, mkdirSync, mkdtempSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import sharp from 'sharp';
import { beforeAll, describe, expect, it } from 'vitest';
import { image } from '../helpers/fixtures';
import { shot } from './harness';
import { appForSuite } from './suite';

const suite = appForSuite([image('moon.png')]);
let page: Page;
beforeAll(() => {
  page = suite.page;
});

/** What the page shows at one moment while the batch runs. */
interface Seen {
  rows: (string | null)[];
  status: string;
  bar: { hidden: boolean; value: number };
  cancel: boolean;
  finished: boolean;
  error: boolean;
}

interface El {
  hidden: boolean;
  value: number;
  textContent: string | null;
  dataset: Record<string, string | undefined>;
  getAttribute(name: string): string | null;
}
declare const document: {
  getElementById(id: string): El;
  querySelectorAll(sel: string): Iterable<El>;
};

const look = (p: Page): Promise<Seen> =>
  p.evaluate(() => {
    const bar = document.getElementById('status-progress');
    return {
      rows: [...document.querySelectorAll('#batch-files li')].map((li) => li.getAttribute('data-state')),
      status: document.getElementById('status-text').textContent ?? '',
      bar: { hidden: bar.hidden, value: bar.value },
      cancel: !document.getElementById('status-cancel').hidden,
      finished: document.getElementById('batch-files').dataset.finished === 'true',
      error: document.getElementById('status-text').dataset.error !== undefined,
    };
  });

describe('batch panel, three files', () => {
  it('rows appear as files start; the bar says "file N of 3" with the time left and Cancel', async () => {
    const root = mkdtempSync(join(tmpdir(), 'rankfold-e2e-batch3-'));
    const input = join(root, 'in');
    // Three levels that do not exist yet: the batch creates them, as `rankfold batch -o` does.
    const output = join(root, 'out', 'a', 'b', 'c');
    mkdirSync(input);
    // Three grey scans, 512×512 px each (fixtures upscaled with sharp's Lanczos kernel where smaller).
    for (const name of ['camera.png', 'moon.png', 'text.png'])
      await sharp(image(name))
        .resize(512, 512, { fit: 'fill', kernel: 'lanczos3' })
        .png()
        .toFile(join(input, name));
    await page.getByRole('tab', { name: 'Batch' }).click();
    await page.getByRole('textbox', { name: 'Input folder' }).fill(input);
    await page.getByRole('textbox', { name: 'Output folder' }).fill(output);
    await page.getByRole('textbox', { name: 'Batch budget' }).fill('10%');
    await page.getByRole('button', { name: 'Run batch' }).click();
    const seen: Seen[] = [];
    const t0 = Date.now();
    for (;;) {
      const s = await look(page);
      seen.push(s);
      if (s.finished) break;
      if (s.error) throw new Error(`the batch failed: ${s.status}`);
      if (Date.now() - t0 > 180_000) throw new Error(`batch not finished; last: ${JSON.stringify(s)}`);
      if (seen.length === 20) await shot(page, 'e2e-batch3-running');
      await page.waitForTimeout(100);
    }
    const running = seen.filter((s) => !s.finished);
    // A row shows while its file runs, before the batch ends.
    expect(running.some((s) => s.rows.includes('running'))).toBe(true);
    // Rows come one by one: some moment shows fewer rows than files.
    expect(running.some((s) => s.rows.length > 0 && s.rows.length < 3)).toBe(true);
    const words = running.map((s) => s.status).filter((t) => /file \d of 3/.test(t));
    expect(words.length).toBeGreaterThan(0);
    expect(words.some((t) => /compressing file [123] of 3 \((camera|moon|text)\.png\)/.test(t))).toBe(true);
    expect(words.some((t) => /\d+ %/.test(t) && /left|nearly done/.test(t))).toBe(true);
    for (const t of words) expect(t).not.toMatch(/--|\bstage\b/);
    expect(running.some((s) => !s.bar.hidden && s.cancel)).toBe(true);
    // The bar never goes back.
    const values = running.filter((s) => !s.bar.hidden).map((s) => s.bar.value);
    for (let i = 1; i < values.length; i++) expect(values[i]).toBeGreaterThanOrEqual(values[i - 1]);
    const end = seen[seen.length - 1];
    expect(end.rows.filter((r) => r === 'done')).toHaveLength(3);
    expect(end.bar.hidden).toBe(true);
    expect(existsSync(output)).toBe(true);
    expect(
      readdirSync(output)
        .filter((f) => f.endsWith('.rkf'))
        .sort(),
    ).toEqual(['camera.rkf', 'moon.rkf', 'text.rkf']);
    await shot(page, 'e2e-batch3-done');
  }, 300_000);

  it('raised no errors in the page', () => {
    expect(suite.app.pageErrors).toEqual([]);
  });
});
