/**
 * The background factorisation may land after the encoder's exact figures (a loaded machine, a large
 * scan). A deeper spectrum changes nothing about the file those figures describe, so they must stay exact:
 * CI at load 19 once showed the "38 dB" figures turned back into estimates when the refinement arrived
 * after the encode (4 Dec). The page asks for the refinement only once the encoder's figures are in; the
 * request is also held here until the exact figures are on show, so the order is the same on every machine.
 */
import type { Page } from 'playwright-core';
import { beforeAll, describe, expect, it } from 'vitest';
import { image } from '../helpers/fixtures';
import { figureCells, shot } from './harness';
import { appForSuite } from './suite';

declare const document: {
  getElementById(id: string): { dataset: Record<string, string | undefined> } | null;
};

const suite = appForSuite([image('camera.png')]);
let page: Page;
beforeAll(() => {
  page = suite.page;
});

describe('a refinement that lands after the exact figures', () => {
  it('leaves the encoder’s figures exact, at the rank they are for', async () => {
    let release = () => {};
    const held = new Promise<void>((r) => {
      release = r;
    });
    let heldCalls = 0;
    await page.route('**/api/call/factors', async (route) => {
      if (route.request().postDataJSON()?.background) {
        heldCalls++;
        await held;
      }
      await route.continue();
    });
    await page.getByRole('button', { name: 'camera', exact: true }).click();
    await page.waitForSelector('body[data-first-paint-ms]', { timeout: 30_000 });
    const budget = page.getByRole('textbox', { name: 'Budget' });
    await budget.fill('33 dB');
    await budget.press('Enter');
    await page.waitForFunction(
      () => {
        const b = document.getElementById('readouts');
        return b?.dataset.state === 'exact' && JSON.parse(b.dataset.budget ?? '{}').kind === 'psnr';
      },
      undefined,
      { timeout: 60_000 },
    );
    // The page asks for the refinement once the encoder's figures are in (src-renderer/open.ts), so the
    // request may reach the route a moment after the figures turned exact.
    await expect.poll(() => heldCalls, { timeout: 10_000 }).toBe(1);
    const before = await figureCells(page);
    expect(before.find((c) => c.metric === 'psnr')?.exact).toBe('true');
    release();
    await page.waitForSelector('body[data-refined]', { timeout: 60_000 });
    // Let the page finish whatever the refinement started (one more frame and a pending evaluation).
    await page.waitForTimeout(500);
    const after = await figureCells(page);
    await shot(page, 'e2e-refine-after-exact');
    expect(after).toEqual(before);
    expect(await page.getAttribute('#readouts', 'data-state')).toBe('exact');
    expect(await page.getByRole('slider', { name: 'Rank' }).inputValue()).toBe(
      before.find((c) => c.metric === 'rank')?.value,
    );
    await page.unroute('**/api/call/factors');
  });
});
