/**
 * Electron shell, tested as pure functions (no Electron runtime is launched).
 * Checks follow the Electron security checklist (electronjs.org/docs/latest/tutorial/security, items
 * "Enable context isolation", "Enable process sandboxing", "Do not enable Node.js integration",
 * "Define a Content Security Policy", "Validate the sender of all IPC messages", "Use a custom
 * protocol instead of file://"; item names from memory) and the WHATWG URL Standard's parsing
 * (hostname, port and userinfo are separate components — a `startsWith` check would miss them).
 */
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { admitCall } from '../../src-main/electron/ipc';
import { buildMenuTemplate } from '../../src-main/electron/menu';
import { resolvePageFile } from '../../src-main/electron/protocol-files';
import { checkSenderFrame, isTrustedSenderUrl } from '../../src-main/electron/sender';
import {
  APP_URL,
  buildWindowOptions,
  DESKTOP_CSP,
  DESKTOP_HEADERS,
} from '../../src-main/electron/window-options';

const top = (url: string) => ({ url, parent: null });

describe('window options (Electron security checklist)', () => {
  const o = buildWindowOptions('/opt/rankfold/dist/electron/preload.cjs');
  it('isolates, sandboxes and keeps Node out of the page', () => {
    expect(o.webPreferences?.contextIsolation).toBe(true);
    expect(o.webPreferences?.sandbox).toBe(true);
    expect(o.webPreferences?.nodeIntegration).toBe(false);
    expect(o.webPreferences?.nodeIntegrationInWorker).toBe(false);
    expect(o.webPreferences?.nodeIntegrationInSubFrames).toBe(false);
    expect(o.webPreferences?.webSecurity).toBe(true);
    expect(o.webPreferences?.webviewTag).toBe(false);
    expect(o.webPreferences?.preload).toBe('/opt/rankfold/dist/electron/preload.cjs');
  });
  it('loads the page from the custom scheme, not file://', () => {
    expect(new URL(APP_URL).protocol).toBe('rankfold:');
  });
  it('has a strict CSP: nothing by default, no inline script, no eval, no remote origins (W3C CSP Level 3 §6)', () => {
    const d = Object.fromEntries(
      DESKTOP_CSP.split(';')
        .map((p) => p.trim().split(/\s+/))
        .map(([k, ...v]) => [k, v]),
    );
    expect(d['default-src']).toEqual(["'none'"]);
    expect(d['script-src']).toEqual(['rankfold://app']);
    expect(DESKTOP_CSP).not.toContain('unsafe-inline');
    expect(DESKTOP_CSP).not.toContain('unsafe-eval');
    expect(DESKTOP_CSP).not.toMatch(/https?:/);
    expect(d['object-src']).toEqual(["'none'"]);
  });
  it('sends COOP/COEP so the page is cross-origin isolated (HTML Standard, "cross-origin isolated")', () => {
    expect(DESKTOP_HEADERS['Cross-Origin-Opener-Policy']).toBe('same-origin');
    expect(DESKTOP_HEADERS['Cross-Origin-Embedder-Policy']).toBe('require-corp');
  });
});

describe('sender frame check (parsed with new URL)', () => {
  it('accepts our page, main frame only', () => {
    expect(isTrustedSenderUrl('rankfold://app/index.html')).toBe(true);
    expect(checkSenderFrame(top('rankfold://app/index.html'))).toBeUndefined();
    expect(checkSenderFrame({ url: 'rankfold://app/index.html', parent: {} })).toMatch(/subframe/);
    expect(checkSenderFrame(null)).toBe('no sender frame');
  });
  it.each([
    'rankfold://app.evil.example/index.html',
    'rankfold://app@evil.example/',
    'rankfold://user:pw@app/',
    'rankfold://app:8080/',
    'file:///opt/rankfold/dist/renderer/index.html',
    'https://app/index.html',
    'http://127.0.0.1:3000/?token=x',
    'rankfold:app',
    'not a url',
    '',
  ])('refuses %s', (url) => {
    expect(isTrustedSenderUrl(url)).toBe(false);
  });
});

describe('IPC admission: sender, then the contract validator', () => {
  const page = top('rankfold://app/index.html');
  it('passes a valid request through, typed', () => {
    const r = admitCall('evaluate', page, {
      scanId: 'abc',
      budget: { kind: 'rank', rank: 12 },
      tile: 0,
      job: 'j1',
    });
    expect(r).toEqual({
      ok: true,
      method: 'evaluate',
      payload: { scanId: 'abc', budget: { kind: 'rank', rank: 12 }, tile: 0, job: 'j1' },
    });
  });
  it('refuses a foreign sender before looking at the payload', () => {
    const r = admitCall('listSamples', top('https://evil.example/'), undefined);
    expect(r).toMatchObject({ ok: false, reason: 'sender "https://evil.example/" is not the Rankfold page' });
  });
  it('refuses an unknown method and a bad payload with the one error format', () => {
    expect(admitCall('readFile', page, '/etc/passwd')).toMatchObject({
      ok: false,
      reason: 'Unknown API method "readFile"',
    });
    expect(
      admitCall('evaluate', page, { scanId: 'abc', budget: { kind: 'rank', rank: 0 }, tile: 0, job: 'j1' }),
    ).toMatchObject({
      ok: false,
      reason: 'Expected integer between 1 and 65535 for rank but received 0 of type number',
    });
    expect(
      admitCall('evaluate', page, { scanId: 'abc', budget: { kind: 'rank', rank: 5 }, tile: 8, job: 'j1' }),
    ).toMatchObject({
      ok: false,
      reason: 'Expected integer between 16 and 512 for tile but received 8 of type number',
    });
    expect(
      admitCall('openScan', page, { source: { kind: 'sample', name: '../../etc/passwd' } }),
    ).toMatchObject({
      ok: false,
      reason: 'Expected a sample file name for source.name but received "../../etc/passwd" of type string',
    });
    expect(admitCall('cancel', page, { job: 'x', extra: 1 })).toMatchObject({
      ok: false,
      reason:
        'Expected an id of 1–64 letters, digits, - or _ for job but received [object Object] of type object',
    });
  });
  it('refuses unexpected fields', () => {
    expect(admitCall('factors', page, { scanId: 'a', maxRank: 10, job: 'j', path: '/etc' })).toMatchObject({
      ok: false,
      reason: 'Unexpected field "path" in factors; allowed: scanId, maxRank, job, background',
    });
  });
  it('uploads are a declared method: a plain scan file name and bytes', () => {
    const up = (name: unknown, bytes: unknown, frame = page) => admitCall('upload', frame, { name, bytes });
    expect(up('scan.png', new Uint8Array(3))).toMatchObject({ ok: true, method: 'upload' });
    expect(up('../scan.png', new Uint8Array(3))).toMatchObject({
      ok: false,
      reason: 'Upload name "../scan.png" contains a folder separator; send the file name alone',
    });
    expect(up('notes.txt', new Uint8Array(3))).toMatchObject({
      ok: false,
      reason: 'notes.txt: is not a scan Rankfold reads (.png, .tif, .tiff, .jpg, .jpeg, .webp)',
    });
    expect(up('scan.png', 'bytes')).toMatchObject({ ok: false, reason: 'Upload needs the file bytes' });
    expect(up('scan.png', new Uint8Array(1), top('file:///x')).ok).toBe(false);
  });
  it('the desktop-only dropped method is carried by IPC only', () => {
    expect(admitCall('dropped', page, '/tmp/scan.png')).toMatchObject({ ok: true, method: 'dropped' });
  });
});

describe('page files through protocol.handle', () => {
  const root = '/opt/rankfold/dist/renderer';
  it('maps our URLs into dist/renderer', () => {
    expect(resolvePageFile('rankfold://app/index.html', root)).toEqual({
      file: join(root, 'index.html'),
      type: 'text/html; charset=utf-8',
    });
    expect(resolvePageFile('rankfold://app/', root)?.file).toBe(join(root, 'index.html'));
    expect(resolvePageFile('rankfold://app/app.js', root)?.type).toBe('text/javascript; charset=utf-8');
  });
  it.each([
    'rankfold://app/../../etc/passwd',
    'rankfold://app/%2e%2e/%2e%2e/etc/passwd',
    'rankfold://app/..%2f..%2fetc%2fpasswd.js',
    'rankfold://other/index.html',
    'file:///opt/rankfold/dist/renderer/index.html',
    'rankfold://app/secret.json',
  ])('refuses %s', (url) => {
    expect(resolvePageFile(url, root)).toBeUndefined();
  });
});

describe('menu', () => {
  it('has the shortcuts and a recent-scans submenu that opens the chosen path', () => {
    const opened: string[] = [];
    const cmds: string[] = [];
    const t = buildMenuTemplate(
      ['/scans/a.tif'],
      {
        command: (c) => cmds.push(c),
        openRecent: (p) => opened.push(p),
        clearRecent: () => undefined,
        quit: () => undefined,
      },
      'linux',
    );
    const scan = t[0].submenu as {
      label?: string;
      accelerator?: string;
      submenu?: unknown;
      click?: () => void;
    }[];
    expect(scan.find((i) => i.label === 'Open scan…')?.accelerator).toBe('CmdOrCtrl+O');
    expect(scan.find((i) => i.label === 'Save…')?.accelerator).toBe('CmdOrCtrl+S');
    const recent = scan.find((i) => i.label === 'Recent scans')?.submenu as {
      label?: string;
      click?: () => void;
    }[];
    recent[0].click?.();
    expect(opened).toEqual(['/scans/a.tif']);
    scan.find((i) => i.label === 'Open scan…')?.click?.();
    expect(cmds).toEqual(['open']);
    const accels = t.flatMap((m) =>
      (m.submenu as { accelerator?: string }[]).map((i) => i.accelerator).filter(Boolean),
    );
    expect(new Set(accels).size).toBe(accels.length);
  });
});
