/**
 * The Batch panel with three scans (issue 14, "Progress"): a row appears for each file as it starts, before
 * the batch ends; the status line says which file of how many is running, with a determinate bar, the
 * time left and a Cancel button; the output folder, three levels of folders that do not exist yet, is
 * created (as `rankfold batch` does); at the end every row reads done and the outputs are there. With a total
 * for the folder (issue #13, "In the app"): Plan total shows the planned PSNR of every file as a histogram and
 * writes nothing; Run batch then writes within the total.
 */
import { existsSync, mkdirSync, mkdtempSync, readdirSync, statSync } from 'node:fs';
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

  it('a total for the folder: Plan total draws the planned PSNR histogram and writes nothing; Run meets it', async () => {
    const root = mkdtempSync(join(tmpdir(), 'rankfold-e2e-batch-total-'));
    const input = join(root, 'in');
    const output = join(root, 'out');
    mkdirSync(input);
    // Four grey scans of 256×256 (fixtures resized with sharp's Lanczos kernel): raw samples 4 × 65,536 bytes.
    const names = ['camera.png', 'moon.png', 'text.png', 'page.png'];
    for (const name of names)
      await sharp(image(name))
        .resize(256, 256, { fit: 'fill', kernel: 'lanczos3' })
        .toColourspace('b-w')
        .png()
        .toFile(join(input, name));
    const total = Math.floor((4 * 256 * 256 * 4) / 100);
    await page.getByRole('tab', { name: 'Batch' }).click();
    await page.getByRole('textbox', { name: 'Input folder' }).fill(input);
    await page.getByRole('textbox', { name: 'Output folder' }).fill(output);
    await page.getByRole('textbox', { name: 'Total for the folder' }).fill('4%');
    const finished = () =>
      page.waitForFunction(
        () => document.getElementById('batch-files').dataset.finished === 'true',
        undefined,
        { timeout: 180_000, polling: 100 },
      );
    await page.getByRole('button', { name: 'Plan total' }).click();
    await finished();
    const plot = page.getByRole('img', { name: 'Planned PSNR per file' });
    expect(await plot.isVisible()).toBe(true);
    const caption = (await page.locator('#batch-plan-caption').textContent()) ?? '';
    const m = /^Planned PSNR of 4 files: lowest (\d+\.\d\d) dB, highest (\d+\.\d\d) dB$/.exec(caption);
    expect(m, caption).not.toBeNull();
    expect(Number(m![1])).toBeLessThanOrEqual(Number(m![2]));
    // Every file is in one bar: the bars' counts (their tooltips) add up to the four files.
    const counts = await page
      .locator('#batch-plan-svg rect title')
      .allTextContents()
      .then((ts) => ts.map((t) => Number(/: (\d+) files?$/.exec(t)?.[1])));
    expect(counts.reduce((a, b) => a + b, 0)).toBe(4);
    expect(await page.locator('#status-text').textContent()).toBe('Plan ready: nothing was written.');
    const rkf = () => (existsSync(output) ? readdirSync(output).filter((f) => f.endsWith('.rkf')) : []);
    expect(rkf()).toEqual([]);
    await shot(page, 'e2e-batch-total-plan');
    // Run with the same total: every file written, and their sum within 4 % of the raw samples.
    await page.getByRole('button', { name: 'Run batch' }).click();
    await finished();
    expect(await page.locator('#status-text').getAttribute('data-error')).toBeNull();
    expect(rkf().sort()).toEqual(['camera.rkf', 'moon.rkf', 'page.rkf', 'text.rkf']);
    const sum = rkf().reduce((s, f) => s + statSync(join(output, f)).size, 0);
    expect(sum).toBeLessThanOrEqual(total);
    expect(sum).toBeGreaterThan(0.9 * total);
    expect(await page.getByRole('img', { name: 'Achieved PSNR per file' }).isVisible()).toBe(true);
    expect(await page.locator('#batch-plan-caption').textContent()).toMatch(/^Achieved PSNR of 4 files: /);
  }, 400_000);

  it('raised no errors in the page', () => {
    expect(suite.app.pageErrors).toEqual([]);
  });
});
