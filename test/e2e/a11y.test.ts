/**
 * Accessibility (issue 14's quality bar): axe-core (Deque, npm `axe-core` 4.x, rule tags wcag2a, wcag2aa,
 * wcag21aa) on the page at 1440×900: empty, with a scan open on each drawer tab, with the Clean result
 * table, the Batch panel with rows (one of them a skipped text file), an error message showing, the swipe
 * divider and the Stack card open. No serious or critical violation may remain. Each of these states is
 * also saved as a screenshot at 1440×900 and 1024×700 (test-artifacts/a11y-*-1440.png, -1024.png).
 * axe-core is a dev dependency; AXE_CORE_PATH may point at another copy of axe.min.js. Without either the
 * suite is skipped and says why.
 */
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { image } from '../helpers/fixtures';
import { type AppSession, cliJson, openApp, shotBoth } from './harness';
import { writePlateSeries } from './series';

function axeSource(): string | undefined {
  const fromEnv = process.env.AXE_CORE_PATH;
  if (fromEnv && existsSync(fromEnv)) return readFileSync(fromEnv, 'utf8');
  try {
    return readFileSync(createRequire(import.meta.url).resolve('axe-core/axe.min.js'), 'utf8');
  } catch {
    return undefined;
  }
}
const source = axeSource();
if (!source) process.stderr.write('a11y: axe-core is not installed (npm install), skipping\n');

interface Violation {
  id: string;
  impact: string | null;
  help: string;
  nodes: { target: string[] }[];
}

let app: AppSession;
let page: Page;

/** axe-core's serious and critical violations on the page as it is now. */
async function serious(): Promise<string[]> {
  // Evaluated through the DevTools protocol, which the page's Content-Security-Policy does not govern.
  await page.evaluate(source as string);
  const violations = (await page.evaluate(
    `axe.run(document, { runOnly: ['wcag2a', 'wcag2aa', 'wcag21aa'] }).then((r) => r.violations)`,
  )) as Violation[];
  return violations
    .filter((v) => v.impact === 'serious' || v.impact === 'critical')
    .map((v) => `${v.impact} ${v.id}: ${v.help} (${v.nodes.map((n) => n.target.join(' ')).join(', ')})`);
}

describe.skipIf(!source)('accessibility (axe-core)', () => {
  beforeAll(async () => {
    const samples = mkdtempSync(join(tmpdir(), 'rankfold-e2e-a11y-'));
    copyFileSync(image('camera.png'), join(samples, 'camera.png'));
    app = await openApp(samples);
    page = app.page;
  });

  afterAll(async () => {
    await app?.close();
  });

  it('the empty page has no serious or critical violations', async () => {
    expect(await serious()).toEqual([]);
  });

  it('with a scan open, on every drawer tab', async () => {
    await page.getByRole('button', { name: 'camera', exact: true }).click();
    // After the deeper factorisation the view moves to the opening rank; check the page once it settles.
    await page.waitForSelector('body[data-refined]', { timeout: 60_000 });
    await page.waitForSelector('#readouts[data-state="exact"]', { timeout: 60_000 });
    for (const tab of ['Clean', 'Save', 'Batch']) {
      await page.getByRole('tab', { name: tab }).click();
      expect(await serious(), tab).toEqual([]);
    }
  });

  it('with the swipe divider showing', async () => {
    await page.getByRole('button', { name: 'Swipe', exact: true }).click();
    await page.waitForSelector('#swipe-handle:not([hidden])');
    expect(await serious()).toEqual([]);
    await page.getByRole('button', { name: 'Side by side', exact: true }).click();
  });

  it('with the Clean result table', async () => {
    await page.getByRole('tab', { name: 'Clean' }).click();
    await page.getByRole('button', { name: 'Clean', exact: true }).click();
    await page.waitForSelector('#clean-report[data-done="true"]', { timeout: 60_000 });
    expect(await page.locator('#clean-report table').count()).toBeGreaterThan(0);
    expect(await serious()).toEqual([]);
    await shotBoth(page, 'a11y-clean-result');
  });

  it('with the Batch panel listing its files, one of them skipped', async () => {
    const root = mkdtempSync(join(tmpdir(), 'rankfold-e2e-a11y-batch-'));
    const input = join(root, 'in');
    mkdirSync(input);
    copyFileSync(image('text.png'), join(input, 'text.png'));
    copyFileSync(image('page.png'), join(input, 'page.png'));
    writeFileSync(join(input, 'notes.txt'), 'not a scan');
    await page.getByRole('tab', { name: 'Batch' }).click();
    await page.getByRole('textbox', { name: 'Input folder' }).fill(input);
    await page.getByRole('textbox', { name: 'Output folder' }).fill(join(root, 'out', 'nested'));
    await page.getByRole('textbox', { name: 'Batch budget' }).fill('10%');
    await page.getByRole('button', { name: 'Run batch' }).click();
    await page.waitForSelector('#batch-files[data-finished="true"]', { timeout: 60_000 });
    const states = await page.$$eval('#batch-files li', (els) =>
      els.map((e) => e.getAttribute('data-state')),
    );
    expect(states.length).toBeGreaterThanOrEqual(2);
    expect(await serious()).toEqual([]);
    await shotBoth(page, 'a11y-batch-rows');
  });

  it('with an error message showing', async () => {
    await page
      .getByRole('textbox', { name: 'Path of a scan on this machine' })
      .fill('/nowhere/missing scan.tif');
    await page.getByRole('button', { name: 'Open', exact: true }).click();
    await page.waitForSelector('#alert:not([hidden])');
    expect(await serious()).toEqual([]);
    await shotBoth(page, 'a11y-error');
    await page.getByRole('button', { name: 'Dismiss message' }).click();
  });

  it('with the Stack card open', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'rankfold-e2e-a11y-stack-'));
    await writePlateSeries(join(dir, 'plate'), 64, 48, 4);
    await cliJson(['compress', '--stack', join(dir, 'plate'), '-o', join(dir, 'plate.rkf'), '--rank', '2']);
    await page.getByRole('textbox', { name: 'Path of a scan on this machine' }).fill(join(dir, 'plate.rkf'));
    await page.getByRole('button', { name: 'Open', exact: true }).click();
    await page.waitForSelector('body[data-stack-frame="0"]', { timeout: 30_000 });
    expect(await page.isVisible('#stack-card')).toBe(true);
    expect(await serious()).toEqual([]);
    await shotBoth(page, 'a11y-stack-card');
  });

  it('raised no errors in the page', () => {
    expect(app.pageErrors).toEqual([]);
  });
});
