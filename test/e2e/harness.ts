/**
 * End-to-end harness: `rankfold serve` from the built CLI as a child process, and headless Chromium
 * through playwright-core with the flags from DEVELOPERS.md. Screenshots go to test-artifacts/.
 *
 * Which Chromium (`chooseChromium`, used by every e2e suite and by bench/ui.bench.ts):
 * - `CHROMIUM_PATH`, if set (it must exist);
 * - else the system Chromium (`/usr/bin/chromium`, Debian's package; `RANKFOLD_SYSTEM_CHROMIUM` moves the
 *   path that is checked, so a machine without it can be simulated), if it exists;
 * - else the Chromium build shipped inside the `@sparticuz/chromium` dev dependency, so a fresh clone needs
 *   no system browser. `RANKFOLD_BROWSER=packaged` forces it, `RANKFOLD_BROWSER=system` forbids it.
 * The packaged build is brotli-compressed in node_modules/@sparticuz/chromium/bin/. We unpack it ourselves
 * into node_modules/.cache/rankfold-chromium-<version>/ (not the package's own loader, which unpacks to a
 * fixed /tmp/chromium that parallel workers race on and other users of /tmp could plant), with the
 * package's copies of NSS (libnss3 & co., which it needs and a minimal Debian lacks) on LD_LIBRARY_PATH
 * and its fonts added to the system's fontconfig.
 */
import { type ChildProcess, execFile, spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { promisify } from 'node:util';
import { brotliDecompressSync } from 'node:zlib';
import { type BrowserContext, chromium, type Page } from 'playwright-core';
import { repoRoot } from '../helpers/fixtures';

const cli = join(repoRoot, 'bin', 'rankfold.mjs');
const artifacts = join(repoRoot, 'test-artifacts');
const CHROMIUM_ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--no-first-run',
];

export interface Served {
  url: string;
  origin: string;
  token: string;
  child: ChildProcess;
  stderr: () => string;
  stop(): Promise<void>;
}

/** Start `rankfold serve --no-open` (and `args`) and read the URL from the first line of stdout. */
export async function serve(env: Record<string, string> = {}, args: string[] = []): Promise<Served> {
  if (!existsSync(join(repoRoot, 'dist', 'cli.js')))
    throw new Error('dist/cli.js is missing: run `npm run build` first');
  const child = spawn(process.execPath, [cli, 'serve', '--no-open', ...args], {
    cwd: repoRoot,
    env: { ...process.env, ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let err = '';
  child.stderr?.on('data', (d) => {
    err += String(d);
  });
  const url = await new Promise<string>((resolve, reject) => {
    let out = '';
    const timer = setTimeout(
      () => reject(new Error(`serve printed no URL within 20 s; stderr: ${err}`)),
      20_000,
    );
    child.stdout?.on('data', (d) => {
      out += String(d);
      const nl = out.indexOf('\n');
      if (nl >= 0) {
        clearTimeout(timer);
        resolve(out.slice(0, nl));
      }
    });
    child.once('exit', (code) => reject(new Error(`serve exited with ${code}: ${err}`)));
  });
  const u = new URL(url);
  return {
    url,
    origin: u.origin,
    token: u.searchParams.get('token') ?? '',
    child,
    stderr: () => err,
    async stop() {
      if (child.exitCode !== null) return;
      const exited = new Promise((r) => child.once('exit', r));
      child.kill('SIGTERM');
      await exited;
    },
  };
}

interface ChromiumChoice {
  kind: 'env' | 'system' | 'packaged';
  executablePath: string;
  /** Extra environment for the browser process (the packaged build's libraries and fonts). */
  env: Record<string, string>;
}

/** The browser the e2e tests and the UI bench launch; see the comment at the top of this file. */
function chooseChromium(env: NodeJS.ProcessEnv = process.env): ChromiumChoice {
  const mode = env.RANKFOLD_BROWSER ?? 'auto';
  if (!['auto', 'system', 'packaged'].includes(mode))
    throw new Error(`RANKFOLD_BROWSER=${mode}: use auto, system or packaged`);
  if (mode !== 'packaged') {
    if (env.CHROMIUM_PATH) {
      if (!existsSync(env.CHROMIUM_PATH))
        throw new Error(`CHROMIUM_PATH=${env.CHROMIUM_PATH} does not exist`);
      return { kind: 'env', executablePath: env.CHROMIUM_PATH, env: {} };
    }
    const system = env.RANKFOLD_SYSTEM_CHROMIUM || '/usr/bin/chromium';
    if (existsSync(system)) return { kind: 'system', executablePath: system, env: {} };
    if (mode === 'system') throw new Error(`RANKFOLD_BROWSER=system but ${system} does not exist`);
  }
  return packagedChromium(env);
}

/** Unpack (once per package version) and describe the Chromium build inside @sparticuz/chromium. */
function packagedChromium(env: NodeJS.ProcessEnv = process.env): ChromiumChoice {
  let entry: string;
  try {
    // Resolved relative to this module (also from the bundled bench in dist/bench/), never imported: the
    // package's own loader is written for AWS Lambda.
    entry = createRequire(import.meta.url).resolve('@sparticuz/chromium');
  } catch {
    throw new Error(
      'no system Chromium and the dev dependency @sparticuz/chromium is not installed: run `npm install`',
    );
  }
  const pkgDir = join(dirname(entry), '..');
  const { version } = JSON.parse(readFileSync(join(pkgDir, 'package.json'), 'utf8')) as { version: string };
  const dir = join(pkgDir, '..', '..', '.cache', `rankfold-chromium-${version}`);
  const exe = join(dir, 'chromium');
  if (!existsSync(exe)) {
    // Unpack into a private folder and rename it into place: parallel workers never see a half-written
    // binary, and an interrupted unpack leaves no folder that looks complete.
    mkdirSync(dirname(dir), { recursive: true });
    const tmp = mkdtempSync(`${dir}.partial-`);
    try {
      const bin = join(pkgDir, 'bin');
      writeFileSync(join(tmp, 'chromium'), brotliDecompressSync(readFileSync(join(bin, 'chromium.br'))), {
        mode: 0o755,
      });
      for (const [archive, into] of [
        ['al2023.tar.br', tmp], // lib/libnss3.so, libnspr4.so, … built for Amazon Linux 2023 (glibc 2.34)
        ['fonts.tar.br', tmp], // fonts/Open_Sans/*.ttf (and a fonts.conf for Lambda's paths, unused)
      ]) {
        const untar = spawnSync('tar', ['-x', '-C', into], {
          input: brotliDecompressSync(readFileSync(join(bin, archive))),
        });
        if (untar.status !== 0) throw new Error(`unpacking ${archive}: ${String(untar.stderr)}`);
      }
      writeFileSync(
        join(tmp, 'rankfold-fonts.conf'),
        `<?xml version="1.0"?>\n<!DOCTYPE fontconfig SYSTEM "fonts.dtd">\n<fontconfig>\n` +
          `  <include ignore_missing="yes">/etc/fonts/fonts.conf</include>\n` +
          `  <dir>${join(dir, 'fonts')}</dir>\n  <cachedir>${join(dir, 'fontconfig-cache')}</cachedir>\n</fontconfig>\n`,
      );
      try {
        renameSync(tmp, dir);
      } catch (e) {
        // Another worker finished first: use its copy.
        if (!existsSync(exe)) throw e;
        rmSync(tmp, { recursive: true, force: true });
      }
    } catch (e) {
      rmSync(tmp, { recursive: true, force: true });
      throw e;
    }
  }
  const ld = [join(dir, 'lib'), env.LD_LIBRARY_PATH].filter(Boolean).join(':');
  return {
    kind: 'packaged',
    executablePath: exe,
    env: { LD_LIBRARY_PATH: ld, FONTCONFIG_FILE: join(dir, 'rankfold-fonts.conf') },
  };
}

let announced = false;
/** Headless Chromium (the one `chooseChromium` picks) with a fresh user-data-dir. */
export async function launchChromium(
  options: { viewport?: { width: number; height: number }; prefix?: string } = {},
): Promise<BrowserContext> {
  const choice = chooseChromium();
  if (!announced && choice.kind === 'packaged') {
    announced = true;
    process.stderr.write(
      `e2e: packaged Chromium (${process.env.RANKFOLD_BROWSER === 'packaged' ? 'RANKFOLD_BROWSER=packaged' : 'no system Chromium'}): ${choice.executablePath}\n`,
    );
  }
  const userDataDir = mkdtempSync(join(tmpdir(), options.prefix ?? 'rankfold-chromium-'));
  return chromium.launchPersistentContext(userDataDir, {
    executablePath: choice.executablePath,
    args: CHROMIUM_ARGS,
    env: { ...process.env, ...choice.env } as Record<string, string>,
    headless: true,
    // The same page locale on every host: under LANG=C.UTF-8 the packaged build reports navigator.language
    // 'en-US@posix', which Intl rejects (uPlot's number format throws while the page loads).
    locale: 'en-US',
    viewport: options.viewport ?? { width: 1440, height: 900 },
    acceptDownloads: true,
  });
}

/** The app in a browser: the server, the browser context, the ready page and the errors the page raised. */
export interface AppSession {
  served: Served;
  ctx: BrowserContext;
  page: Page;
  pageErrors: string[];
  close(): Promise<void>;
}

/** `rankfold serve` with `samplesDir` as the demo scans, and the page loaded and ready in Chromium. */
export async function openApp(
  samplesDir: string,
  viewport = { width: 1440, height: 900 },
): Promise<AppSession> {
  const served = await serve({ RANKFOLD_SAMPLES_DIR: samplesDir });
  const ctx = await launch(viewport);
  const page = await ctx.newPage();
  const pageErrors: string[] = [];
  page.on('pageerror', (e) => pageErrors.push(e.message));
  await page.goto(served.url);
  await page.waitForSelector('body[data-ready="true"]');
  return {
    served,
    ctx,
    page,
    pageErrors,
    async close() {
      await ctx.close();
      await served.stop();
    },
  };
}

/** Headless Chromium with a fresh user-data-dir. */
export async function launch(viewport = { width: 1440, height: 900 }): Promise<BrowserContext> {
  return launchChromium({ viewport });
}

export async function shot(page: Page, name: string): Promise<string> {
  mkdirSync(artifacts, { recursive: true });
  const file = join(artifacts, `${name}.png`);
  await page.screenshot({ path: file });
  return file;
}

// Run in the page by shotBoth; the Node type-check has no DOM lib.
declare const document: {
  getElementById(id: string): { dataset: Record<string, string | undefined> } | null;
};
declare function requestAnimationFrame(callback: () => void): number;

/**
 * Screenshots of the page as it is at both of issue 14's window sizes: `<name>-1440` at 1440×900 and
 * `<name>-1024` at 1024×700 (the view re-fits: waits for the stage's new canvas size and two frames for
 * the charts), then back to 1440×900.
 */
export async function shotBoth(page: Page, name: string): Promise<void> {
  const resize = async (width: number, height: number) => {
    const was = await page.getAttribute('#stage', 'data-canvas');
    await page.setViewportSize({ width, height });
    await page.waitForFunction((w) => document.getElementById('stage')?.dataset.canvas !== w, was);
    await page.evaluate(
      () => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(() => r(undefined)))),
    );
  };
  await shot(page, `${name}-1440`);
  await resize(1024, 700);
  await shot(page, `${name}-1024`);
  await resize(1440, 900);
}

/** All readouts as numbers, keyed by data-metric. */
export async function readouts(page: Page): Promise<Record<string, number>> {
  return page.$$eval('[data-metric]', (els) =>
    Object.fromEntries(
      els.map((e) => [e.getAttribute('data-metric') ?? '', Number(e.getAttribute('data-value'))]),
    ),
  );
}

/** One readout of the Figures card: its metric, value, exactness and shown text. */
export type FigureCell = { metric: string; value: string; exact: string | null; text: string };

/** Every readout of the Figures card, in page order. */
export function figureCells(page: Page): Promise<FigureCell[]> {
  return page.$$eval('#readouts [data-metric]', (els) =>
    els.map((e) => ({
      metric: e.getAttribute('data-metric') ?? '',
      value: e.getAttribute('data-value') ?? '',
      exact: e.getAttribute('data-exact'),
      text: e.querySelector('dd')?.textContent ?? '',
    })),
  );
}

const run = promisify(execFile);
/** `rankfold <args>` from the built CLI: its text report on stdout. */
export async function cliText(args: string[]): Promise<string> {
  const { stdout } = await run(process.execPath, [cli, ...args], { cwd: repoRoot, maxBuffer: 1 << 24 });
  return stdout;
}

/** `rankfold <args> --json` from the built CLI, parsed. */
export async function cliJson(args: string[]): Promise<Record<string, unknown>> {
  const { stdout } = await run(process.execPath, [cli, ...args, '--json'], {
    cwd: repoRoot,
    maxBuffer: 1 << 24,
  });
  return JSON.parse(stdout);
}

/** The figures the page shows for a whole-plane budget, as readouts: bytes, PSNR, SSIM and the base rank. */
export type PageFigures = { bytes: number; psnr: number; ssim: number; rank: number };

/** The page's figures of `readouts(page)` in {@link PageFigures} form, to compare with {@link cliFigures}. */
export const shownFigures = (r: Record<string, number>): PageFigures => ({
  bytes: r.bytes,
  psnr: r.psnr,
  ssim: r.ssim,
  rank: r.rank,
});

/** `rankfold compress input -o <fresh dir>/out.rkf --tile 0 <budget> --json` (default layers), as page figures. */
export async function cliFigures(input: string, budget: string[]): Promise<PageFigures> {
  const out = join(mkdtempSync(join(tmpdir(), 'rankfold-e2e-cli-')), 'out.rkf');
  const r = (await cliJson(['compress', input, '-o', out, '--tile', '0', ...budget])) as {
    outputBytes: number;
    psnr: number;
    ssim: number;
    ranks: { rank: number }[];
  };
  return { bytes: r.outputBytes, psnr: r.psnr, ssim: r.ssim, rank: r.ranks[0].rank };
}
