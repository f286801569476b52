/**
 * Browser-mode server guards, against a real listener on 127.0.0.1 (in process, built page and workers).
 * Sources: RFC 9110 §7.2 (Host names the target authority — a DNS-rebinding page sends its own name),
 * RFC 6454 §7 (Origin header), W3C Fetch Metadata Request Headers §2.4 (Sec-Fetch-Site: cross-site),
 * HTML Living Standard "cross-origin isolated" (COOP same-origin + COEP require-corp), W3C CSP Level 3.
 */

import { copyFileSync, mkdtempSync } from 'node:fs';
import { request } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Backend } from '../../src-main/node/server/backend';
import {
  checkHostAndOrigin,
  type RunningServer,
  startServer,
  tokenMatches,
} from '../../src-main/node/server/http';
import { image, repoRoot } from '../helpers/fixtures';

let srv: RunningServer;
let backend: Backend;
const samples = mkdtempSync(join(tmpdir(), 'rankfold-srv-samples-'));
copyFileSync(image('text.png'), join(samples, 'text.png'));
const outside = mkdtempSync(join(tmpdir(), 'rankfold-srv-outside-'));
copyFileSync(image('page.png'), join(outside, 'page.png'));

beforeAll(async () => {
  backend = new Backend({ workersDir: join(repoRoot, 'dist', 'workers'), samplesDir: samples });
  srv = await startServer({ staticDir: join(repoRoot, 'dist', 'renderer'), backend });
});
afterAll(async () => {
  await srv?.close();
  await backend?.close();
});

function hit(path: string, opts: { method?: string; headers?: Record<string, string>; body?: string } = {}) {
  return new Promise<{
    status: number;
    headers: Record<string, string | string[] | undefined>;
    body: string;
  }>((resolve, reject) => {
    const req = request(
      {
        host: '127.0.0.1',
        port: srv.port,
        path,
        method: opts.method ?? 'GET',
        headers: { Host: `127.0.0.1:${srv.port}`, ...opts.headers },
      },
      (res) => {
        let body = '';
        res.on('data', (d) => {
          body += d;
        });
        res.on('end', () => resolve({ status: res.statusCode ?? 0, headers: res.headers, body }));
      },
    );
    req.on('error', reject);
    req.end(opts.body);
  });
}
const call = (method: string, payload: unknown, headers: Record<string, string> = {}) =>
  hit(`/api/call/${method}`, {
    method: 'POST',
    headers: {
      'Content-Type': 'application/json',
      'X-Rankfold-Token': srv.token,
      Origin: `http://127.0.0.1:${srv.port}`,
      ...headers,
    },
    body: JSON.stringify(payload),
  });

describe('token', () => {
  it('the URL carries a long random token and listens on 127.0.0.1 only', () => {
    expect(srv.url).toBe(`http://127.0.0.1:${srv.port}/?token=${srv.token}`);
    expect(srv.token.length).toBeGreaterThanOrEqual(43); // 32 random bytes, base64url
    expect((srv.server.address() as { address: string }).address).toBe('127.0.0.1');
  });
  it('refuses API requests without the token or with a wrong one', async () => {
    const none = await hit('/api/call/listSamples', {
      method: 'POST',
      headers: { 'Content-Type': 'application/json' },
      body: '{}',
    });
    expect(none.status).toBe(401);
    expect(JSON.parse(none.body).error.message).toBe('Refused: missing or wrong token');
    expect((await call('listSamples', {}, { 'X-Rankfold-Token': `${srv.token.slice(0, -1)}x` })).status).toBe(
      401,
    );
    expect((await hit(`/api/events`)).status).toBe(401);
    expect((await hit(`/api/events?token=nope`)).status).toBe(401);
  });
  it('answers with the token', async () => {
    const r = await call('listSamples', {});
    expect(r.status).toBe(200);
    expect(JSON.parse(r.body).value.map((s: { name: string }) => s.name)).toEqual(['text.png']);
  });
  it('tokenMatches is exact', () => {
    expect(tokenMatches('abc', 'abc')).toBe(true);
    expect(tokenMatches('abd', 'abc')).toBe(false);
    expect(tokenMatches('ab', 'abc')).toBe(false);
    expect(tokenMatches(undefined, 'abc')).toBe(false);
  });
});

describe('Host and Origin', () => {
  it('refuses a foreign Origin even with the token', async () => {
    const r = await call('listSamples', {}, { Origin: 'http://evil.example' });
    expect(r.status).toBe(403);
    expect(JSON.parse(r.body).error.message).toBe('Refused: Origin "http://evil.example" is not this page');
    expect((await call('listSamples', {}, { Origin: 'null' })).status).toBe(403);
    expect((await call('listSamples', {}, { Origin: `http://127.0.0.1:${srv.port + 1}` })).status).toBe(403);
  });
  it('refuses a rebound Host name', async () => {
    const r = await call('listSamples', {}, { Host: `attacker.example:${srv.port}` });
    expect(r.status).toBe(403);
    expect(JSON.parse(r.body).error.message).toBe(
      `Refused: Host "attacker.example:${srv.port}" is not this loopback server`,
    );
    expect((await hit('/', { headers: { Host: `attacker.example:${srv.port}` } })).status).toBe(403);
  });
  it('refuses Sec-Fetch-Site: cross-site', async () => {
    expect((await call('listSamples', {}, { 'Sec-Fetch-Site': 'cross-site' })).status).toBe(403);
  });
  it('pure check', () => {
    expect(
      checkHostAndOrigin({ host: 'localhost:8080', origin: 'http://localhost:8080' }, 8080),
    ).toBeUndefined();
    expect(checkHostAndOrigin({ host: '127.0.0.1:8080' }, 8080)).toBeUndefined();
    expect(checkHostAndOrigin({ host: '127.0.0.1:8080', origin: 'https://127.0.0.1:8080' }, 8080)).toMatch(
      /not this page/,
    );
    expect(checkHostAndOrigin({}, 8080)).toMatch(/Host ""/);
  });
});

describe('headers and static files', () => {
  it('serves the page cross-origin isolated with a strict CSP', async () => {
    const r = await hit('/');
    expect(r.status).toBe(200);
    expect(r.headers['cross-origin-opener-policy']).toBe('same-origin');
    expect(r.headers['cross-origin-embedder-policy']).toBe('require-corp');
    expect(String(r.headers['content-security-policy'])).toContain("default-src 'none'");
    expect(String(r.headers['content-security-policy'])).not.toContain('unsafe-inline');
    expect(r.body).toContain('aria-label="Rank"');
  });
  it('does not serve files outside the page folder', async () => {
    expect((await hit('/../../package.json')).status).toBe(404);
    expect((await hit('/%2e%2e/%2e%2e/package.json')).status).toBe(404);
  });
});

describe('file access is limited to what the user chose', () => {
  it('refuses a path that was not chosen, accepts it once chosen', async () => {
    const file = join(outside, 'page.png');
    const refused = await call('openScan', { source: { kind: 'path', path: file } });
    expect(refused.status).toBe(422);
    expect(JSON.parse(refused.body).error.message).toBe(
      `${file}: not opened or chosen in this session; open it through the page or a dialog first`,
    );
    const picked = await call('pick', { kind: 'file', suggested: file });
    expect(JSON.parse(picked.body).value.path).toBeTruthy();
    const opened = await call('openScan', { source: { kind: 'path', path: file } });
    expect(opened.status).toBe(200);
    expect(JSON.parse(opened.body).value).toMatchObject({
      width: 384,
      height: 191,
      channels: 1,
      bitDepth: 8,
    });
  });
  it('refuses a bad payload with the contract message', async () => {
    const r = await call('openScan', { source: { kind: 'sample', name: '../secret.png' } });
    expect(r.status).toBe(400);
    expect(JSON.parse(r.body).error.message).toBe(
      'Expected a sample file name for source.name but received "../secret.png" of type string',
    );
    expect((await call('nosuch', {})).status).toBe(400);
  });
});
