/**
 * The page's speed in headless Chromium against `rankfold serve` (the built CLI), on synthetic plates of
 * the fictional Fenwick Lab (gel lanes on a graded background, film grain, slight column banding):
 * - time from clicking a 3000×4000 scan to spectrum + first reconstruction on screen (target ≤ 1.5 s),
 *   against the decode of the same file alone (`inspect`-like baseline, measured in the same run);
 * - one rank step of the slider at 2000×1500 (target ≤ 16 ms), against a repaint with no rank change.
 * Writes `${RANKFOLD_BENCH_OUT ?? 'docs/bench'}/50-ui.md`.
 *
 * Usage: `npm run bench ui` (the e2e tests' Chromium: CHROMIUM_PATH, else /usr/bin/chromium, else the packaged
 * build; RANKFOLD_BENCH_STEPS sets the steps).
 */
import { spawn } from 'node:child_process';
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Page } from 'playwright-core';
import sharp from 'sharp';
import { launchChromium } from '../test/e2e/harness';

// Functions passed to page.evaluate run in the page; the Node type-check has no DOM lib.
declare const document: {
  body: { dataset: Record<string, string | undefined> };
  getElementById(id: string): {
    value: string;
    dataset: Record<string, string | undefined>;
    dispatchEvent(e: unknown): boolean;
  } | null;
};
declare const requestAnimationFrame: (cb: () => void) => number;
declare const Event: new (type: string, init?: { bubbles?: boolean }) => unknown;

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
const STEPS = Number(process.env.RANKFOLD_BENCH_STEPS ?? 40);

/** A gel plate: smooth background, Gaussian lanes of bands, grain and a faint column pattern. */
function plate(w: number, h: number, seed: number): Buffer {
  const buf = Buffer.alloc(w * h);
  let s = seed >>> 0 || 1;
  const rnd = () => {
    s ^= s << 13;
    s ^= s >>> 17;
    s ^= s << 5;
    return (s >>> 0) / 4294967296;
  };
  const lanes = 12;
  const bands = Array.from({ length: lanes * 9 }, () => ({
    lane: Math.floor(rnd() * lanes),
    y: rnd() * h,
    a: 40 + rnd() * 120,
    sd: 4 + rnd() * 10,
  }));
  const col = new Float32Array(w);
  for (let x = 0; x < w; x++) col[x] = (rnd() - 0.5) * 3;
  const row = new Float32Array(w);
  for (let y = 0; y < h; y++) {
    row.fill(0);
    for (const b of bands) {
      const dy = y - b.y;
      if (Math.abs(dy) > 4 * b.sd) continue;
      const g = b.a * Math.exp(-(dy * dy) / (2 * b.sd * b.sd));
      const x0 = Math.floor(((b.lane + 0.15) * w) / lanes);
      const x1 = Math.floor(((b.lane + 0.85) * w) / lanes);
      for (let x = x0; x < x1; x++) row[x] += g;
    }
    for (let x = 0; x < w; x++) {
      const base = 215 - 40 * (y / h) - 15 * Math.sin((3 * x) / w);
      const v = base - row[x] + col[x] + (rnd() - 0.5) * 6;
      buf[y * w + x] = v < 0 ? 0 : Math.min(v, 255);
    }
  }
  return buf;
}

function median(a: number[]) {
  const s = [...a].sort((x, y) => x - y);
  return s[Math.floor(s.length / 2)];
}
function pct(a: number[], p: number) {
  const s = [...a].sort((x, y) => x - y);
  return s[Math.min(s.length - 1, Math.floor((p / 100) * s.length))];
}

async function serve(samples: string) {
  const child = spawn(process.execPath, [join(root, 'bin', 'rankfold.mjs'), 'serve', '--no-open'], {
    env: { ...process.env, RANKFOLD_SAMPLES_DIR: samples },
    stdio: ['ignore', 'pipe', 'inherit'],
  });
  const url = await new Promise<string>((res, rej) => {
    let out = '';
    child.stdout.on('data', (d) => {
      out += String(d);
      if (out.includes('\n')) res(out.split('\n')[0]);
    });
    child.once('exit', (c) => rej(new Error(`serve exited ${c}`)));
  });
  return { url, child };
}

async function openSample(
  page: Page,
  title: string,
): Promise<{ wallMs: number; pageMs: number; openMs: number; factorsMs: number }> {
  await page.evaluate(() => {
    delete document.body.dataset.firstPaintMs;
  });
  // Let the previous scan's background work finish or be stopped, so each open starts from quiet.
  await new Promise((r) => setTimeout(r, 1500));
  const t0 = Date.now();
  console.error(`ui bench: opening ${title}`);
  await page.getByRole('button', { name: title, exact: true }).click();
  await page.waitForSelector('body[data-first-paint-ms]', { timeout: 120_000 });
  const wallMs = Date.now() - t0;
  const pageMs = Number(await page.getAttribute('body', 'data-first-paint-ms'));
  const openMs = Number(await page.getAttribute('body', 'data-open-ms'));
  const factorsMs = Number(await page.getAttribute('body', 'data-factors-ms'));
  return { wallMs, pageMs, openMs, factorsMs };
}

/** In-page time of one slider input event: the synchronous rebuild + paint, and until the next frame. */
async function step(page: Page, value: number): Promise<{ syncMs: number; frameMs: number }> {
  return page.evaluate(async (v) => {
    const slider = document.getElementById('rank')!;
    const t0 = performance.now();
    slider.value = String(v);
    slider.dispatchEvent(new Event('input', { bubbles: true }));
    const syncMs = performance.now() - t0;
    await new Promise<void>((r) => requestAnimationFrame(() => r()));
    return { syncMs, frameMs: performance.now() - t0 };
  }, value);
}

async function main() {
  const load0 = loadavg()[0];
  const dir = mkdtempSync(join(tmpdir(), 'rankfold-ui-bench-'));
  await sharp(plate(4000, 3000, 7), { raw: { width: 4000, height: 3000, channels: 1 } })
    .toColourspace('b-w')
    .png({ compressionLevel: 1 })
    .toFile(join(dir, 'fenwick-plate-large.png'));
  await sharp(plate(2000, 1500, 11), { raw: { width: 2000, height: 1500, channels: 1 } })
    .toColourspace('b-w')
    .png({ compressionLevel: 1 })
    .toFile(join(dir, 'fenwick-plate-medium.png'));
  // Baseline: decoding the large file alone, in this process, with the same decoder the server uses.
  const { decodeImage } = await import('../src-main/node/image/decode');
  const decodes: number[] = [];
  for (let i = 0; i < 3; i++) {
    const t = performance.now();
    await decodeImage(join(dir, 'fenwick-plate-large.png'));
    decodes.push(performance.now() - t);
  }
  const decodeMs = median(decodes);

  console.error(`ui bench: decode baseline ${decodeMs.toFixed(0)} ms`);
  const { url, child } = await serve(dir);
  const ctx = await launchChromium({ prefix: 'rankfold-ui-chromium-' });
  const lines: string[] = [];
  try {
    const page = await ctx.newPage();
    await page.goto(url);
    await page.waitForSelector('body[data-ready="true"]');
    const opens: { wallMs: number; pageMs: number; openMs: number; factorsMs: number }[] = [];
    for (let i = 0; i < 3; i++) opens.push(await openSample(page, 'fenwick plate large'));
    const openWall = median(opens.map((o) => o.wallMs));
    const openPage = median(opens.map((o) => o.pageMs));
    const openDecode = median(opens.map((o) => o.openMs));
    const openFactors = median(opens.map((o) => o.factorsMs));

    console.error(`ui bench: opens ${JSON.stringify(opens)}`);
    await openSample(page, 'fenwick plate medium');
    console.error('ui bench: waiting for the first encode');
    await page.waitForFunction(
      () =>
        document.getElementById('readouts')?.dataset.state === 'exact' ||
        document.getElementById('status-text')?.dataset.error !== undefined,
      undefined,
      { timeout: 300_000 },
    );
    const error = await page.getAttribute('#status-text', 'data-error');
    if (error) throw new Error(`the page reported: ${error}`);
    // Steady state: the background refinement has landed and its rebuild is done.
    await page.waitForSelector('body[data-refined]', { timeout: 300_000 });
    await page.waitForFunction(
      () => document.body.dataset.appliedRank === (document.getElementById('rank')?.value ?? ''),
      undefined,
      {
        timeout: 60_000,
      },
    );
    const max = Number(await page.getAttribute('#rank', 'max'));
    const start = Number(await page.inputValue('#rank'));
    const steps: { syncMs: number; frameMs: number }[] = [];
    const repaints: { syncMs: number; frameMs: number }[] = [];
    let k = start;
    for (let i = 0; i < STEPS; i++) {
      k = k + 1 > max ? start : k + 1;
      steps.push(await step(page, k));
      repaints.push(await step(page, k)); // same value: repaint only, no layer change
    }
    const sMed = median(steps.map((s) => s.syncMs));
    const sP95 = pct(
      steps.map((s) => s.syncMs),
      95,
    );
    const fMed = median(steps.map((s) => s.frameMs));
    const rMed = median(repaints.map((s) => s.syncMs));
    const fmt = (x: number) => x.toFixed(1);
    lines.push(
      '## 50 · The page (headless Chromium)',
      '',
      `Machine: ${cpus().length} × ${cpus()[0]?.model ?? 'CPU'}, Chromium headless (software rendering, --disable-gpu), viewport 1440×900.`,
      'Scans: synthetic Fenwick Lab gel plates (8-bit gray PNG), generated by this benchmark.',
      `Load average (1 min) at the start / end of the run: ${load0.toFixed(1)} / ${loadavg()[0].toFixed(1)} on ${cpus().length} cores; on a shared machine the open time varies by about 2× between runs.`,
      '',
      '| measure | value | baseline (same run) | ratio | target |',
      '|---|---|---|---|---|',
      `| open 3000×4000 → spectrum + first reconstruction, wall clock from the click | ${fmt(openWall)} ms | decode alone ${fmt(decodeMs)} ms | ${(openWall / decodeMs).toFixed(2)}× | ≤ 1500 ms |`,
      `| same, measured in the page (click handler → first painted frame) | ${fmt(openPage)} ms | | | |`,
      `| of which: scan decoded and described (openScan answered) | ${fmt(openDecode)} ms | | | |`,
      `| of which: first factors received (rank 24: σ, U, V and the source planes) | ${fmt(openFactors)} ms | | | |`,
      `| slider step at 2000×1500, rebuild one layer + repaint (median of ${STEPS}) | ${fmt(sMed)} ms | repaint only ${fmt(rMed)} ms | ${(sMed / rMed).toFixed(2)}× | ≤ 16 ms |`,
      `| slider step, 95th percentile | ${fmt(sP95)} ms | | | ≤ 16 ms |`,
      `| slider step until the next animation frame (median) | ${fmt(fMed)} ms | | | |`,
      '',
      `Verdict: open, measured in the page, ${openPage <= 1500 ? 'meets' : 'misses'} the 1.5 s target (wall clock with the driver's click and polling: ${openWall <= 1500 ? 'meets' : 'misses'}); slider step ${sP95 <= 16 ? 'meets' : sMed <= 16 ? 'meets at the median but not at p95 of' : 'misses'} the 16 ms target.`,
      '',
    );
  } finally {
    await ctx.close();
    child.kill('SIGTERM');
  }
  const out = process.env.RANKFOLD_BENCH_OUT ?? join(root, 'docs', 'bench');
  mkdirSync(out, { recursive: true });
  writeFileSync(join(out, '50-ui.md'), lines.join('\n'));
  console.log(lines.join('\n'));
}

main().catch((err) => {
  console.error(err);
  process.exit(1);
});
