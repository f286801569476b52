/**
 * Issue 14, "View": one view state (zoom, pan, divider) that every mode respects, also after a pan then
 * 1:1 (once a blank stage); re-fit on resize; keyboard zoom and pan; a wide divider handle that the
 * keyboard moves; controls shown only in the views they affect; pane labels that do not overlap. The
 * stage publishes its state as data attributes (data-mode, data-scale in device px per image px,
 * data-cx/-cy the image point at the centre, data-fitted, data-swipe, data-canvas), which the tests wait
 * on. Screenshots of every view at 1440×900 and 1024×700 in test-artifacts/.
 *
 * camera.png is 512×512 px (scikit-image's `data.camera()`, test/fixtures/SOURCES.md).
 */
import type { Page } from 'playwright-core';
import { beforeAll, describe, expect, it } from 'vitest';
import { image } from '../helpers/fixtures';
import { shot } from './harness';
import { appForSuite } from './suite';

interface El {
  dataset: Record<string, string | undefined>;
  width: number;
  height: number;
  getContext(kind: '2d'): {
    getImageData(x: number, y: number, w: number, h: number): { data: Uint8ClampedArray };
  };
}
declare const document: { getElementById(id: string): El | null };

const suite = appForSuite([image('camera.png')]);
let page: Page;
beforeAll(() => {
  page = suite.page;
});

const SIZE = 512;

interface Stage {
  mode: string;
  scale: number;
  cx: number;
  cy: number;
  fitted: boolean;
  swipe: number;
  w: number;
  h: number;
}

async function stage(): Promise<Stage> {
  const d = (await page.$eval('#stage', (e) => ({ ...(e as unknown as El).dataset }))) as Record<
    string,
    string
  >;
  const [w, h] = d.canvas.split('x').map(Number);
  return {
    mode: d.mode,
    scale: Number(d.scale),
    cx: Number(d.cx),
    cy: Number(d.cy),
    fitted: d.fitted === 'true',
    swipe: Number(d.swipe),
    w,
    h,
  };
}

/** Wait until the stage's data attribute `name` differs from `was` (a repaint happened). */
async function changed(name: string, was: string | undefined) {
  await page.waitForFunction(([n, v]) => document.getElementById('stage')?.dataset[n as string] !== v, [
    name,
    was,
  ] as const);
}

async function act(name: string, action: () => Promise<unknown>) {
  const was = await page.getAttribute('#stage', `data-${name}`);
  await action();
  await changed(name, was ?? undefined);
}

/** Pixels of the right canvas that show the stage's background (38, 41, 46): where no image is painted. */
const background = () =>
  page.evaluate(() => {
    const c = document.getElementById('canvas-right') as El;
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    let n = 0;
    for (let i = 0; i < d.length; i += 4) if (d[i] === 38 && d[i + 1] === 41 && d[i + 2] === 46) n++;
    return { n, of: c.width * c.height };
  });

const fitScale = (s: Stage) => Math.min(s.w / SIZE, s.h / SIZE);

const MODES: Record<string, string> = {
  'Side by side': 'side',
  Swipe: 'swipe',
  Difference: 'diff',
  'One layer': 'layer',
  'Tile ranks': 'tiles',
};

/** Switch the view mode by its button and wait for the repaint in that mode. */
async function mode(name: string) {
  await page.getByRole('button', { name, exact: true }).click();
  await page.waitForSelector(`#stage[data-mode="${MODES[name]}"]`);
}

const visible = (sel: string) => page.isVisible(sel);

describe('one view state, at 1440×900 and 1024×700', () => {
  it('opens fitted; + and − zoom, arrows pan, 0 fits again (keyboard)', async () => {
    await page.getByRole('button', { name: 'camera', exact: true }).click();
    await page.waitForSelector('body[data-refined]', { timeout: 60_000 });
    await page.waitForSelector('#readouts[data-state="exact"]', { timeout: 60_000 });
    const fit = await stage();
    expect(fit.fitted).toBe(true);
    expect(fit.scale).toBeCloseTo(fitScale(fit), 9);
    // Keys reach the view from anywhere but a field: focus the stage's toolbar first.
    await page.getByRole('button', { name: 'Fit' }).focus();
    await act('scale', () => page.keyboard.press('+'));
    const zoomed = await stage();
    expect(zoomed.scale).toBeCloseTo(fit.scale * 1.5, 9);
    expect(zoomed.fitted).toBe(false);
    await act('cx', () => page.keyboard.press('ArrowLeft'));
    const panned = await stage();
    // A tenth of the pane to the left: the centre moves by w/10 device px, in image px.
    expect(panned.cx).toBeCloseTo(zoomed.cx - zoomed.w / 10 / zoomed.scale, 6);
    await act('cy', () => page.keyboard.press('ArrowDown'));
    expect((await stage()).cy).toBeGreaterThan(zoomed.cy);
    await act('scale', () => page.keyboard.press('-'));
    expect((await stage()).scale).toBeCloseTo(fit.scale, 9);
    await act('fitted', () => page.keyboard.press('0'));
    expect(await stage()).toMatchObject({ fitted: true, cx: SIZE / 2, cy: SIZE / 2 });
  });

  it('after a pan, 1:1 shows the image (no blank stage), and every mode keeps zoom and pan with full panes', async () => {
    await page.getByRole('button', { name: 'Fit' }).click();
    await page.getByRole('button', { name: 'Zoom in' }).click();
    const box = await page.locator('#canvas-right').boundingBox();
    if (!box) throw new Error('no right canvas');
    await act('cx', async () => {
      await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
      await page.mouse.down();
      await page.mouse.move(box.x + box.width / 2 - 120, box.y + box.height / 2 - 60, { steps: 4 });
      await page.mouse.up();
    });
    await act('scale', () => page.getByRole('button', { name: '1:1' }).click());
    expect((await stage()).scale).toBe(1);
    // At 1:1 a 512 px scan is narrower than the pane at 1440 px: centred, and painted.
    const bg = await background();
    expect(bg.n).toBeLessThan(bg.of);
    const painted = (await stage()).w * (await stage()).h - bg.n;
    expect(painted).toBeGreaterThanOrEqual(
      Math.min(SIZE, (await stage()).w) * Math.min(SIZE, (await stage()).h),
    );
    // Zoom past the pane on both axes, then pan: every mode keeps the same state and fills its pane.
    await act('scale', () => page.getByRole('button', { name: 'Zoom in' }).click());
    await act('scale', () => page.getByRole('button', { name: 'Zoom in' }).click());
    await act('cx', async () => {
      await page.mouse.move(box.x + 40, box.y + 40);
      await page.mouse.down();
      await page.mouse.move(box.x + 140, box.y + 90, { steps: 4 });
      await page.mouse.up();
    });
    const held = await stage();
    expect(held.scale).toBe(2.25);
    for (const name of ['Swipe', 'Difference', 'One layer', 'Tile ranks', 'Side by side']) {
      await mode(name);
      const s = await stage();
      expect(s.scale, name).toBe(held.scale);
      // The pane widens outside side by side; the centre may move only to keep the image over it.
      if (name === 'Side by side') expect([s.cx, s.cy], name).toEqual([held.cx, held.cy]);
      else expect(s.cy, name).toBe(held.cy);
      expect((await background()).n, `${name}: stage pixels left unpainted`).toBe(0);
    }
  });

  it('the swipe divider: a 32 px handle, moved by keys and by dragging, kept across modes', async () => {
    await page.getByRole('button', { name: 'Fit' }).click();
    await mode('Swipe');
    const handle = page.getByRole('slider', { name: 'Swipe divider' });
    expect(await handle.isVisible()).toBe(true);
    const hb = await handle.boundingBox();
    expect(hb?.width).toBeGreaterThanOrEqual(32);
    const before = await stage();
    await handle.focus();
    await act('swipe', () => page.keyboard.press('ArrowRight'));
    const after = await stage();
    expect(after.swipe).toBeCloseTo(before.swipe + 0.05, 9);
    // The arrow moved the divider, not the view.
    expect([after.cx, after.scale]).toEqual([before.cx, before.scale]);
    expect(await handle.getAttribute('aria-valuenow')).toBe(String(Math.round(after.swipe * 100)));
    await act('swipe', () => page.keyboard.press('Home'));
    expect((await stage()).swipe).toBe(0);
    await act('swipe', () => page.keyboard.press('End'));
    expect((await stage()).swipe).toBe(1);
    await act('swipe', () => page.keyboard.press('PageDown'));
    expect((await stage()).swipe).toBe(0.75);
    // Grab the handle 12 px off the line (the old grab band was about 14 px wide in all) and drag it.
    const cb = await page.locator('#canvas-right').boundingBox();
    const hb2 = await handle.boundingBox();
    if (!cb || !hb2) throw new Error('no canvas or handle');
    await act('swipe', async () => {
      await page.mouse.move(hb2.x + hb2.width / 2 + 12, hb2.y + hb2.height / 3);
      await page.mouse.down();
      await page.mouse.move(cb.x + cb.width * 0.3, hb2.y + hb2.height / 3, { steps: 5 });
      await page.mouse.up();
    });
    expect((await stage()).swipe).toBeCloseTo(0.3, 1);
    await shot(page, 'e2e-view-1440-swipe');
    // The divider stays where it was across other modes.
    const share = (await stage()).swipe;
    await mode('Difference');
    expect(await handle.isVisible()).toBe(false);
    await mode('Swipe');
    expect((await stage()).swipe).toBe(share);
  });

  it('shows each control only in the view it affects', async () => {
    const want: Record<string, { gain: boolean; layer: boolean; legend: boolean; divider: boolean }> = {
      'Side by side': { gain: false, layer: false, legend: false, divider: false },
      Swipe: { gain: false, layer: false, legend: false, divider: true },
      Difference: { gain: true, layer: false, legend: true, divider: false },
      'One layer': { gain: false, layer: true, legend: true, divider: false },
    };
    for (const [name, w] of Object.entries(want)) {
      await mode(name);
      expect(
        {
          gain: await visible('#gain-control'),
          layer: await visible('#layer-control'),
          legend: await visible('#map-legend'),
          divider: await visible('#swipe-handle'),
        },
        name,
      ).toEqual(w);
    }
  });

  it('re-fits on resize, and keeps a chosen zoom over the image', async () => {
    await mode('Side by side');
    await page.getByRole('button', { name: 'Fit' }).click();
    for (const [name, file] of [
      ['Side by side', 'side'],
      ['Swipe', 'swipe'],
      ['Difference', 'difference'],
      ['Tile ranks', 'tile-ranks'],
    ] as const) {
      await mode(name);
      await shot(page, `e2e-view-1440-${file}`);
    }
    await mode('Side by side');
    const big = await stage();
    await act('canvas', () => page.setViewportSize({ width: 1024, height: 700 }));
    const small = await stage();
    expect(small.w).toBeLessThan(big.w);
    expect(small.fitted).toBe(true);
    expect(small.scale).toBeCloseTo(fitScale(small), 9);
    // Zoomed in, a resize keeps the scale and the image still fills the pane.
    await act('scale', () => page.getByRole('button', { name: '1:1' }).click());
    await act('canvas', () => page.setViewportSize({ width: 1100, height: 760 }));
    expect((await stage()).scale).toBe(1);
    await act('canvas', () => page.setViewportSize({ width: 1024, height: 700 }));
    await page.getByRole('button', { name: 'Fit' }).click();
  });

  it('at 1024×700 the pane labels do not overlap, in every view', async () => {
    for (const [name, file] of [
      ['Side by side', 'side'],
      ['Swipe', 'swipe'],
      ['Difference', 'difference'],
      ['One layer', 'layer'],
      ['Tile ranks', 'tile-ranks'],
    ] as const) {
      await mode(name);
      const [l, r] = await Promise.all([
        page.locator('#label-left').boundingBox(),
        page.locator('#label-right').boundingBox(),
      ]);
      if (l && r && l.width > 0 && r.width > 0) expect(l.x + l.width, name).toBeLessThanOrEqual(r.x);
      await shot(page, `e2e-view-1024-${file}`);
    }
    await mode('Side by side');
  });

  it('raised no errors in the page', () => {
    expect(suite.app.pageErrors).toEqual([]);
  });
});
