/**
 * Issue 14's acceptance, as an outside script would run it: a ~3-megapixel grey page the app was never
 * tuned on (composed at test time from the scikit-image fixtures, resized with sharp's Lanczos kernel),
 * opened in the served page; "38 dB" typed into the Budget field and Enter pressed. It then reads a PSNR
 * readout ≥ 38 dB marked exact and a Rank slider whose value equals the `rank` readout, and checks that the
 * page's figures are those of `rankfold compress --min-psnr 38 --tile 0 --json` (the CLI's default layers) to
 * the byte: on this page that file is the wavelet residual layer alone (rank 0), about a quarter of the bytes
 * of the base-only file the page wrote before (126 993 → 32 851 bytes at 38.05 / 38.01 dB, measured 4 Dec).
 *
 * The issue's time limit (10 s) is asserted only with RANKFOLD_ACCEPTANCE=1: the quality-floor search on a
 * scan this size is the codec's open problem, and a CI machine under load would fail it for reasons that
 * are not the page's. Without it the same figures are checked under a generous limit. Either way the
 * seconds taken are measured and printed (stderr), with the machine's load.
 */
import { mkdtempSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { image } from '../helpers/fixtures';
import { type AppSession, cliFigures, figureCells, openApp, readouts, shot, shownFigures } from './harness';

declare const document: {
  getElementById(
    id: string,
  ): { dataset: Record<string, string | undefined>; textContent: string | null } | null;
};

/** The page: 2000×1500 px = 3.0 MP, 8-bit grey. */
const WIDTH = 2000;
const HEIGHT = 1500;
/** The issue's limit, from pressing Enter to exact figures (issue 14, "Acceptance"). */
const LIMIT_S = 10;
/** The limit without RANKFOLD_ACCEPTANCE=1: any machine, under any load, gets there well within it. */
const CI_LIMIT_S = 240;
const strict = process.env.RANKFOLD_ACCEPTANCE === '1';

/**
 * Top: page.png (a printed page, uneven light) stretched over the width. Bottom: text.png (print on a
 * textured surface) and phantom.png turned grey, side by side. None of them is a demo scan of the app.
 */
async function composePage(file: string): Promise<void> {
  const topH = 995;
  const bottomH = HEIGHT - topH;
  const textW = 1300;
  const grey = async (name: string, w: number, h: number) =>
    sharp(image(name)).greyscale().resize(w, h, { fit: 'fill', kernel: 'lanczos3' }).png().toBuffer();
  const composed = await sharp({
    create: { width: WIDTH, height: HEIGHT, channels: 3, background: '#ffffff' },
  })
    .composite([
      { input: await grey('page.png', WIDTH, topH), left: 0, top: 0 },
      { input: await grey('text.png', textW, bottomH), left: 0, top: topH },
      { input: await grey('phantom.png', WIDTH - textW, bottomH), left: textW, top: topH },
    ])
    .png()
    .toBuffer();
  await sharp(composed).removeAlpha().extractChannel(0).toColourspace('b-w').png().toFile(file);
}

const samples = mkdtempSync(join(tmpdir(), 'rankfold-e2e-acceptance-'));
let app: AppSession;
let page: Page;

beforeAll(async () => {
  await composePage(join(samples, 'unseen-page.png'));
  app = await openApp(samples);
  page = app.page;
});

afterAll(async () => {
  await app?.close();
});

describe('acceptance: "38 dB" on a scan the app has not seen', () => {
  it(
    'reaches exact figures ≥ 38 dB with the Rank slider at the rank readout',
    async () => {
      const meta = await sharp(join(samples, 'unseen-page.png')).metadata();
      expect([meta.width, meta.height, meta.channels]).toEqual([WIDTH, HEIGHT, 1]);
      await page.getByRole('button', { name: 'unseen page', exact: true }).click();
      await page.waitForSelector('body[data-first-paint-ms]', { timeout: 120_000 });
      const budget = page.getByRole('textbox', { name: 'Budget' });
      await budget.fill('38 dB');
      const t0 = Date.now();
      await budget.press('Enter');
      const limit = (strict ? LIMIT_S : CI_LIMIT_S) * 1000;
      let reached = true;
      await page
        .waitForFunction(
          () => {
            const b = document.getElementById('readouts');
            return b?.dataset.state === 'exact' && JSON.parse(b.dataset.budget ?? '{}').kind === 'psnr';
          },
          undefined,
          { timeout: limit, polling: 50 },
        )
        .catch(() => {
          reached = false;
        });
      const seconds = (Date.now() - t0) / 1000;
      const load = loadavg().map((l) => l.toFixed(1));
      process.stderr.write(
        `acceptance: "38 dB" on a ${WIDTH}×${HEIGHT} grey page: ${reached ? `${seconds.toFixed(1)} s` : `not within ${limit / 1000} s`} to exact figures (load ${load.join(' ')}; ${strict ? `limit ${LIMIT_S} s asserted` : 'set RANKFOLD_ACCEPTANCE=1 to assert the 10-s limit'})\n`,
      );
      await shot(page, 'e2e-acceptance-38db');
      expect(reached, `exact figures within ${limit / 1000} s`).toBe(true);
      const cells = await figureCells(page);
      const psnr = cells.find((c) => c.metric === 'psnr');
      const rank = cells.find((c) => c.metric === 'rank');
      expect(psnr?.exact).toBe('true');
      expect(Number(psnr?.value)).toBeGreaterThanOrEqual(38);
      expect(rank?.exact).toBe('true');
      const slider = await page.getByRole('slider', { name: 'Rank' }).inputValue();
      expect(rank?.value).toBe(slider);
      expect(Number(slider)).toBeGreaterThanOrEqual(0);
      // The page's figures are the CLI's for the same floor and tile, to the byte (one encoder, one path).
      expect(shownFigures(await readouts(page))).toEqual(
        await cliFigures(join(samples, 'unseen-page.png'), ['--min-psnr', '38']),
      );
      // A file with a residual layer is shown as decoded (the page cannot rebuild it from σ, U, V), and said so.
      // …and its largest error is σ₁ of the page's own spectrum (the encoder does not factor at rank 0).
      if (Number(slider) === 0) {
        expect(await page.textContent('#label-right')).toContain('wavelet residual layer only');
        expect(Number(cells.find((c) => c.metric === 'spectral-bound')?.value)).toBeGreaterThan(0);
      }
      if (strict) expect(seconds).toBeLessThanOrEqual(LIMIT_S);
    },
    (CI_LIMIT_S + 180) * 1000,
  );

  // Cancel, on a job long enough to cancel without a race (on moon.png every floor now ends within about a
  // second, and an unreachable one is refused at once): a 39-dB floor on this page runs for seconds.
  it('Cancel stops the encoder: the worker is free for the next job at once', async () => {
    const budget = page.getByRole('textbox', { name: 'Budget' });
    await budget.fill('39 dB');
    await budget.press('Enter');
    await page.waitForSelector('#status-cancel:not([hidden])');
    await page.waitForTimeout(300);
    await page.click('#status-cancel');
    await page.waitForFunction(
      () => document.getElementById('status-text')?.textContent === 'Cancelled.',
      undefined,
      { timeout: 10_000 },
    );
    expect(await page.getByRole('alert').isVisible()).toBe(false);
    // Had the 39-dB search kept the session's worker, this rank encode would queue behind it. The limit
    // is wide because a rank encode of this page alone took more than 20 s at load 25 on 2 cores; a queued
    // encode would still wait for the whole 39-dB search, which is several times longer than that.
    await page.getByRole('slider', { name: 'Rank' }).fill('12');
    await page.waitForFunction(
      () => {
        const box = document.getElementById('readouts');
        return box?.dataset.state === 'exact' && box.dataset.rank === '12';
      },
      undefined,
      { timeout: 60_000 },
    );
  });

  it('raised no errors in the page', () => {
    expect(app.pageErrors).toEqual([]);
  });
});
