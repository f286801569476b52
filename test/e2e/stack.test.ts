/**
 * Stack files in the page (browser mode): an 8-frame series written by the built CLI's
 * `compress --stack`, opened by path, browsed with the "Frame" slider.
 *
 * Outside references:
 * - the CLI's own `compress --stack --json` report (frames, outputBytes, stored eigen-frames) and the
 *   file size on disk (node:fs stat), which the page's readouts must equal;
 * - the CLI's `expand --frame I` output read back with sharp 0.33 (`raw()`), which the frame the back
 *   end sends to the page must equal sample for sample;
 * - raw size = width · height · channels · bytes per sample · frames (common practice).
 */
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { BrowserContext, Page } from 'playwright-core';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeFactorSet } from '../../src-main/contract';
import { cliJson, cliText, launch, readouts, type Served, serve, shot } from './harness';
import { writePlateSeries } from './series';

const W = 64;
const H = 48;
const N = 8;
const dir = mkdtempSync(join(tmpdir(), 'rankfold-e2e-stack-'));
const framesDir = join(dir, 'plate');
const stackFile = join(dir, 'plate.rkf');

let served: Served;
let ctx: BrowserContext;
let page: Page;
let report: Record<string, unknown>;
const pageErrors: string[] = [];

beforeAll(async () => {
  await writePlateSeries(framesDir, W, H, N);
  // --rank 3: exactly three eigen-frames, whatever the rate control would pick for a budget (its choices
  // are tested in test/stack); this suite checks what the page shows of the file.
  report = await cliJson(['compress', '--stack', framesDir, '-o', stackFile, '--rank', '3']);
  served = await serve();
  ctx = await launch();
  page = await ctx.newPage();
  page.on('pageerror', (e) => pageErrors.push(e.message));
  await page.goto(served.url);
  await page.waitForSelector('body[data-ready="true"]');
}, 60_000);

afterAll(async () => {
  await ctx?.close();
  await served?.stop();
  rmSync(dir, { recursive: true, force: true });
});

async function apiStackFrame(path: string, frame: number, originals?: string) {
  const res = await fetch(`${served.origin}/api/call/stackFrame`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json', 'X-Rankfold-Token': served.token },
    body: JSON.stringify({ path, frame, originals }),
  });
  if ((res.headers.get('content-type') ?? '').startsWith('application/octet-stream'))
    return { buf: await res.arrayBuffer() };
  return { error: ((await res.json()) as { error: { message: string } }).error.message };
}

describe('stack files in the page', () => {
  it('refuses a stack file the user has not opened or chosen', async () => {
    const r = await apiStackFrame(stackFile, 0);
    expect(r.error).toMatch(/not opened or chosen/);
  });

  it('opens the stack: Frame slider, frame-mode spectrum, per-frame PSNR/SSIM and size readouts equal to the CLI report', async () => {
    await page.getByLabel('Path of a scan on this machine').fill(stackFile);
    await page.getByRole('button', { name: 'Open', exact: true }).click();
    await page.waitForSelector('body[data-stack-frame="0"]', { timeout: 30_000 });
    const slider = page.getByRole('slider', { name: 'Frame' });
    expect(await slider.isEnabled()).toBe(true);
    expect(await slider.getAttribute('max')).toBe(String(N));
    expect(await page.textContent('#scan-info')).toContain(`stack of ${N} frames`);
    expect(await page.textContent('#scan-info')).toContain(`${W}×${H} px`);
    const r = await readouts(page);
    // Whole-file figures: the CLI's report and the size on disk.
    expect(report.frames).toBe(N);
    expect(report.channels).toBe(1);
    expect(r.bytes).toBe(statSync(stackFile).size);
    expect(r.bytes).toBe(report.outputBytes);
    expect(r.ratio).toBeCloseTo((W * H * N) / statSync(stackFile).size, 9);
    expect(r.bpp).toBeCloseTo(report.bpp as number, 9);
    expect(r['frame-count']).toBe(N);
    const stored = (report.spectrum as { stored: number }[])[0].stored;
    expect(stored).toBe(3);
    expect(r['eigen-frames']).toBe(stored);
    expect(r.frame).toBe(1);
    // This frame's PSNR/SSIM as recorded in the file (float32) equal the CLI report's per-frame figures.
    const first = (report.perFrame as { psnr: number; ssim: number }[])[0];
    expect(r.psnr).toBeCloseTo(first.psnr, 4);
    expect(r.ssim).toBeCloseTo(first.ssim, 6);
    expect(await page.textContent('#stack-note')).toMatch(/as recorded in the file/);
    // The series' lowest frame PSNR and its frame, as the CLI report gives them.
    const worst = report.psnr as { worst: number; worstFrame: number };
    expect(r['worst-psnr']).toBeCloseTo(worst.worst, 4);
    expect(await page.textContent('[data-metric="worst-psnr"] dd')).toContain(
      `frame ${worst.worstFrame + 1}`,
    );
    // The frame-mode spectrum chart replaced the rank spectrum.
    expect(await page.textContent('#chart-sigma')).toContain('Frame-mode singular values');
    // A stack file keeps no originals: the left pane says so rather than repeating the decoded frame.
    expect(await page.textContent('#label-left')).toContain('not available');
    // The frame-mode plots fill their cards once the title and legend have their size (not squashed).
    const share = await page.$$eval('#chart-sigma, #chart-error', (els) =>
      els.map(
        (e) =>
          (e.querySelector('.u-wrap') as unknown as { offsetHeight: number }).offsetHeight / e.clientHeight,
      ),
    );
    for (const f of share) expect(f).toBeGreaterThan(0.5);
  });

  it('the CLI text report and the app name the same worst frame, both counting from 1', async () => {
    const text = await cliText([
      'compress',
      '--stack',
      framesDir,
      '-o',
      join(dir, 'again.rkf'),
      '--rank',
      '3',
    ]);
    const m = /PSNR worst [\d.]+ dB \(frame (\d+) of 8\)/.exec(text);
    expect(m, text).not.toBeNull();
    const n = Number(m?.[1]);
    // The JSON report gives the array position (from 0) of the same frame.
    expect(n).toBe((report.psnr as { worstFrame: number }).worstFrame + 1);
    expect(await page.textContent('[data-metric="worst-psnr"] dd')).toContain(`frame ${n}`);
  });

  it('moving the Frame slider shows another frame and updates the readouts', async () => {
    const before = await page.locator('#canvas-right').screenshot();
    await page.getByRole('slider', { name: 'Frame' }).fill('7');
    await page.waitForSelector('body[data-stack-frame="6"]', { timeout: 30_000 });
    const after = await page.locator('#canvas-right').screenshot();
    expect(Buffer.compare(before, after)).not.toBe(0);
    const r = await readouts(page);
    expect(r.frame).toBe(7);
    expect(r.psnr).toBeCloseTo((report.perFrame as { psnr: number }[])[6].psnr, 4);
    expect(await page.textContent('[data-metric="frame"] dd')).toContain('frame-7.png');
    await shot(page, 'stack-frame-7');
  });

  it('the frame sent to the page equals `rankfold expand --frame 7` (frames count from 1), read back with sharp', async () => {
    const out = join(dir, 'f7.png');
    await cliJson(['expand', stackFile, '-o', out, '--frame', '7']);
    expect((await sharp(out).metadata()).channels).toBe(1);
    const { data, info } = await sharp(out).toColourspace('b-w').raw().toBuffer({ resolveWithObject: true });
    expect(info.channels).toBe(1);
    const r = await apiStackFrame(stackFile, 6);
    const { header, arrays } = decodeFactorSet(r.buf as ArrayBuffer);
    expect(header.stack?.frame).toBe(6);
    expect([header.width, header.height]).toEqual([W, H]);
    expect(Array.from(arrays['src.0'])).toEqual(Array.from(data));
    const bad = await apiStackFrame(stackFile, N);
    expect(bad.error).toMatch(/frame 9 does not exist; the stack holds frames 1–8/);
  });

  it('shows the original frame from the folder the user gives, and says why when it cannot', async () => {
    await page.getByRole('textbox', { name: 'Folder of the original frames' }).fill(framesDir);
    await page.getByRole('button', { name: 'Show originals' }).click();
    await page.waitForSelector('body[data-stack-original="true"]', { timeout: 30_000 });
    expect(await page.textContent('#label-left')).toBe('original of frame 7 · frame-7.png');
    // Difference is no longer flat: the decoded frame against its original.
    await page.getByRole('button', { name: 'Difference' }).click();
    await shot(page, 'stack-original-difference');
    await page.getByRole('button', { name: 'Side by side' }).click();
    await shot(page, 'stack-original-side');
    // The original the back end sends is the frame file itself, sample for sample (sharp 0.33 raw()).
    const { data } = await sharp(join(framesDir, 'frame-3.png')).toColourspace('b-w').raw().toBuffer({
      resolveWithObject: true,
    });
    const r = decodeFactorSet((await apiStackFrame(stackFile, 2, framesDir)).buf as ArrayBuffer);
    expect(r.header.stack?.original).toEqual({ shown: true, note: 'original: frame-3.png' });
    expect(Array.from(r.arrays['orig.0'])).toEqual(Array.from(data));
    expect(Array.from(r.arrays['src.0'])).not.toEqual(Array.from(data));
    // A frame file changed since the stack was written is not passed off as its original.
    const px = Buffer.from(data);
    px[0] ^= 0xff;
    await sharp(px, { raw: { width: W, height: H, channels: 1 } })
      .toColourspace('b-w')
      .png()
      .toFile(join(framesDir, 'frame-3.png'));
    const changed = decodeFactorSet((await apiStackFrame(stackFile, 2, framesDir)).buf as ArrayBuffer);
    expect(changed.header.stack?.original?.shown).toBe(false);
    expect(changed.header.stack?.original?.note).toContain('is not the frame that was stored');
    expect(changed.arrays['orig.0']).toBeUndefined();
    rmSync(join(framesDir, 'frame-3.png'));
    const gone = decodeFactorSet((await apiStackFrame(stackFile, 2, framesDir)).buf as ArrayBuffer);
    expect(gone.header.stack?.original?.note).toBe(
      `frame-3.png (frame 3) is missing from ${framesDir} or cannot be read`,
    );
    // In the page: frame 3 now says why its original is not shown.
    await page.getByRole('slider', { name: 'Frame' }).fill('3');
    await page.waitForSelector('body[data-stack-frame="2"][data-stack-original="false"]', {
      timeout: 30_000,
    });
    expect(await page.textContent('#label-left')).toBe('original of frame 3: not shown');
    expect(await page.textContent('#originals-note')).toContain('frame-3.png (frame 3) is missing');
  });

  it('raised no errors in the page', () => {
    expect(pageErrors).toEqual([]);
  });
});
