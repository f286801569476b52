/**
 * End-to-end harness: `rankfold serve` from the built CLI as a child process, and headless Chromium
 * through playwright-core with the flags from DEVELOPERS.md. Screenshots go to test-artifacts/.
 */
import { type ChildProcess, execFile, spawn } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { type BrowserContext, chromium, type Page } from 'playwright-core';
import { repoRoot } from '../helpers/fixtures';

export const cli = join(repoRoot, 'bin', 'rankfold.mjs');
export const artifacts = join(repoRoot, 'test-artifacts');
export const CHROMIUM = process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';
export const CHROMIUM_ARGS = [
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

/** Start `rankfold serve --no-open` and read the URL from the first line of stdout. */
export async function serve(env: Record<string, string> = {}): Promise<Served> {
  if (!existsSync(join(repoRoot, 'dist', 'cli.js')))
    throw new Error('dist/cli.js is missing: run `npm run build` first');
  const child = spawn(process.execPath, [cli, 'serve', '--no-open'], {
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

/** Headless Chromium with a fresh user-data-dir. */
export async function launch(viewport = { width: 1440, height: 900 }): Promise<BrowserContext> {
  const userDataDir = mkdtempSync(join(tmpdir(), 'rankfold-chromium-'));
  return chromium.launchPersistentContext(userDataDir, {
    executablePath: CHROMIUM,
    args: CHROMIUM_ARGS,
    headless: true,
    viewport,
    acceptDownloads: true,
  });
}

export async function shot(page: Page, name: string): Promise<string> {
  mkdirSync(artifacts, { recursive: true });
  const file = join(artifacts, `${name}.png`);
  await page.screenshot({ path: file });
  return file;
}

/** All readouts as numbers, keyed by data-metric. */
export async function readouts(page: Page): Promise<Record<string, number>> {
  return page.$$eval('[data-metric]', (els) =>
    Object.fromEntries(
      els.map((e) => [e.getAttribute('data-metric') ?? '', Number(e.getAttribute('data-value'))]),
    ),
  );
}

const run = promisify(execFile);
/** `rankfold <args> --json` from the built CLI, parsed. */
export async function cliJson(args: string[]): Promise<Record<string, unknown>> {
  const { stdout } = await run(process.execPath, [cli, ...args, '--json'], {
    cwd: repoRoot,
    maxBuffer: 1 << 24,
  });
  return JSON.parse(stdout);
}
