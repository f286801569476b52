/**
 * Browser-mode server guards, against a real listener on 127.0.0.1 (in process, built page and workers).
 * Sources: RFC 9110 §7.2 (Host names the target authority — a DNS-rebinding page sends its own name),
 * RFC 6454 §7 (Origin header), W3C Fetch Metadata Request Headers §2.4 (Sec-Fetch-Site: cross-site),
 * HTML Living Standard "cross-origin isolated" (COOP same-origin + COEP require-corp), W3C CSP Level 3.
 */

import { copyFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../src-main/node/server/http';
import {
  checkHostAndOrigin,
  checkRequestShape,
  tokenMatches,
  uploadName,
} from '../../src-main/node/server/http-guards';
import { image } from '../helpers/fixtures';
import { call as callOn, hit as hitOn, rawHttp, startTestServer, type TestServer } from './harness';

let srv: RunningServer;
let server: TestServer;
const samples = mkdtempSync(join(tmpdir(), 'rankfold-srv-samples-'));
copyFileSync(image('text.png'), join(samples, 'text.png'));
const outside = mkdtempSync(join(tmpdir(), 'rankfold-srv-outside-'));
copyFileSync(image('page.png'), join(outside, 'page.png'));

beforeAll(async () => {
  server = await startTestServer({ samplesDir: samples });
  srv = server.srv;
});
afterAll(async () => {
  await server?.close();
});

const hit = (path: string, opts: Parameters<typeof hitOn>[2] = {}) => hitOn(srv, path, opts);
const call = (method: string, payload: unknown, headers: Record<string, string> = {}) =>
  callOn(srv, method, payload, headers);

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

describe('malformed requests get 400 (RFC 9112 §3.2)', () => {
  // RFC 9112 §3.2: "A server MUST respond with a 400 (Bad Request) status code to any HTTP/1.1 request
  // message that lacks a Host header field and to any request message that contains more than one Host
  // header field line or a Host header field with an invalid field value."
  it('two Host lines, even both ours, get 400 (Node keeps only the first in req.headers)', async () => {
    const host = `Host: 127.0.0.1:${srv.port}`;
    const r = await rawHttp(srv.port, `GET / HTTP/1.1\r\n${host}\r\n${host}`);
    expect(r.status).toBe(400);
    expect(JSON.parse(r.body).error.message).toBe(
      'Refused: the request has 2 Host headers; send exactly one',
    );
  });
  it('no Host gets 400, in HTTP/1.0 too', async () => {
    expect((await rawHttp(srv.port, 'GET / HTTP/1.1')).status).toBe(400);
    const r = await rawHttp(srv.port, 'GET / HTTP/1.0');
    expect(r.status).toBe(400);
    expect(JSON.parse(r.body).error.message).toBe('Refused: the request has no Host header');
  });
  it('pure check of the Host lines and the request target', () => {
    const h = ['Host', '127.0.0.1:8080'];
    expect(checkRequestShape(h, '/')).toBeUndefined();
    expect(checkRequestShape(h, 'http://127.0.0.1:8080/x')).toBeUndefined();
    expect(checkRequestShape([...h, 'HOST', 'localhost:8080'], '/')).toMatch(/2 Host headers/);
    expect(checkRequestShape([], '/')).toMatch(/no Host/);
    expect(checkRequestShape(['Host', 'a b'], '/')).toMatch(/not a valid host/);
    expect(checkRequestShape(h, '*')).toMatch(/must be a path/);
  });
});

describe('upload names', () => {
  it('an upload named .. gets 400 with a clear message, not 500', async () => {
    const r = await hit('/api/upload?name=..', {
      method: 'POST',
      headers: { 'X-Rankfold-Token': srv.token },
      body: 'x',
    });
    expect(r.status).toBe(400);
    expect(JSON.parse(r.body).error.message).toBe('Upload name ".." is not a file name');
  });
  it('pure check: strict decoding and a plain file name', () => {
    expect(uploadName('?name=scan%20one.png')).toBe('scan one.png');
    expect(uploadName('?name=scan+one.png')).toBe('scan one.png');
    expect(uploadName('?name=%E6%9D%B1.tif')).toBe('東.tif');
    expect(() => uploadName('?name=%2e%2e')).toThrow('Upload name ".." is not a file name');
    expect(() => uploadName('?name=%FF.png')).toThrow('Upload name is not valid percent-encoded UTF-8');
    expect(() => uploadName('?name=a.png&name=b.png')).toThrow('Upload takes one ?name=, not several');
    expect(() => uploadName('')).toThrow('Upload needs ?name= with the file name');
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
  it('desktop-only methods and JSON uploads are not served over HTTP', async () => {
    const dropped = await call('dropped', '/etc');
    expect(dropped.status).toBe(400);
    expect(JSON.parse(dropped.body).error.message).toBe('Unknown API method "dropped"');
    const upload = await call('upload', { name: 'a.png', bytes: [1, 2, 3] });
    expect(upload.status).toBe(400);
    expect(JSON.parse(upload.body).error.message).toBe(
      'Upload sends the file bytes as the body of /api/upload?name=, not as JSON',
    );
  });
});
