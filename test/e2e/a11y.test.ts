/**
 * Accessibility (issue 14's quality bar): axe-core (Deque, npm `axe-core` 4.x, rule tags wcag2a, wcag2aa,
 * wcag21aa) on the page with a scan open and with each drawer tab shown, at 1440×900. No serious or
 * critical violation may remain. axe-core is a dev dependency; AXE_CORE_PATH may point at another copy of
 * axe.min.js. Without either the suite is skipped and says why.
 */
import { copyFileSync, existsSync, mkdtempSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { image } from '../helpers/fixtures';
import { type AppSession, openApp } from './harness';

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
});
