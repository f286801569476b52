/**
 * One app session per e2e suite: `rankfold serve` with the given demo scans (copied into a fresh folder)
 * and Chromium, started before the suite's tests and closed after them.
 */
import { copyFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, join } from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll } from 'vitest';
import { type AppSession, openApp } from './harness';

export interface SuiteApp {
  readonly app: AppSession;
  readonly page: Page;
}

/** Register the suite's app: `scans` (paths) become its demo scans. Read `app` and `page` inside tests. */
export function appForSuite(scans: string[], viewport = { width: 1440, height: 900 }): SuiteApp {
  const samples = mkdtempSync(join(tmpdir(), 'rankfold-e2e-suite-'));
  for (const s of scans) copyFileSync(s, join(samples, basename(s)));
  let app: AppSession | undefined;
  beforeAll(async () => {
    app = await openApp(samples, viewport);
  });
  afterAll(async () => {
    await app?.close();
  });
  const started = () => {
    if (!app) throw new Error('the app is not started yet');
    return app;
  };
  return {
    get app() {
      return started();
    },
    get page() {
      return started().page;
    },
  };
}
