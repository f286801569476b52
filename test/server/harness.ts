/**
 * A real browser-mode server on 127.0.0.1 for tests (built page and workers), and two ways to talk to it:
 * `hit` through node:http (well-formed requests, any headers), and `rawHttp` over a bare socket (requests
 * node:http would not send: two Host lines, no Host, odd request targets).
 */

import { request } from 'node:http';
import { connect } from 'node:net';
import { join } from 'node:path';
import sharp from 'sharp';
import { Backend, type BackendOptions } from '../../src-main/node/server/backend';
import { type RunningServer, startServer } from '../../src-main/node/server/http';
import { repoRoot } from '../helpers/fixtures';

export interface TestServer {
  srv: RunningServer;
  backend: Backend;
  close(): Promise<void>;
}

export async function startTestServer(options: Partial<BackendOptions> = {}): Promise<TestServer> {
  const backend = new Backend({ workersDir: join(repoRoot, 'dist', 'workers'), ...options });
  const srv = await startServer({ staticDir: join(repoRoot, 'dist', 'renderer'), backend });
  return {
    srv,
    backend,
    async close() {
      await srv.close();
      await backend.close();
    },
  };
}

export interface HitResult {
  status: number;
  headers: Record<string, string | string[] | undefined>;
  body: string;
}

/** One request through node:http, with Host set to the listener unless `headers` says otherwise. */
export function hit(
  srv: RunningServer,
  path: string,
  opts: { method?: string; headers?: Record<string, string>; body?: string | Buffer } = {},
): Promise<HitResult> {
  return new Promise((resolve, reject) => {
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

/** A JSON API call with the token and our Origin. */
export const call = (
  srv: RunningServer,
  method: string,
  payload: unknown,
  headers: Record<string, string> = {},
): Promise<HitResult> =>
  hit(srv, `/api/call/${method}`, {
    method: 'POST',
    headers: {
      'Content-Type': 'application/json',
      'X-Rankfold-Token': srv.token,
      Origin: `http://127.0.0.1:${srv.port}`,
      ...headers,
    },
    body: JSON.stringify(payload),
  });

/**
 * Send `head` (request line and header lines, without the blank line) and `body` as bytes over a bare socket,
 * with `Connection: close`; resolves with the status (0 when the server closed without answering) and body.
 */
export function rawHttp(port: number, head: string, body = ''): Promise<{ status: number; body: string }> {
  return new Promise((resolve, reject) => {
    const s = connect(port, '127.0.0.1', () => {
      s.write(`${head}\r\nConnection: close\r\n\r\n`);
      s.write(body);
    });
    const chunks: Buffer[] = [];
    s.on('data', (d) => chunks.push(d));
    s.on('error', reject);
    s.on('close', () => {
      const text = Buffer.concat(chunks).toString('latin1');
      const m = /^HTTP\/1\.[01] (\d{3})/.exec(text);
      const start = text.indexOf('\r\n\r\n');
      const head = start < 0 ? text : text.slice(0, start);
      let rest = start < 0 ? '' : text.slice(start + 4);
      if (/\r\ntransfer-encoding: *chunked/i.test(head)) {
        // RFC 9112 §7.1: size in hex, CRLF, data, CRLF … until a zero size.
        let out = '';
        for (;;) {
          const eol = rest.indexOf('\r\n');
          const size = Number.parseInt(rest.slice(0, eol), 16);
          if (!(size > 0)) break;
          out += rest.slice(eol + 2, eol + 2 + size);
          rest = rest.slice(eol + 2 + size + 2);
        }
        rest = out;
      }
      resolve({ status: m ? Number(m[1]) : 0, body: Buffer.from(rest, 'latin1').toString('utf8') });
    });
  });
}

/** An 8-bit grey PNG of uniform noise (an LCG with Numerical Recipes' constants): nearly full rank. */
export async function noisePng(file: string, w: number, h: number, seed = 2024): Promise<void> {
  const px = Buffer.alloc(w * h);
  let s = seed;
  for (let i = 0; i < px.length; i++) {
    s = (s * 1664525 + 1013904223) >>> 0;
    px[i] = s >>> 24;
  }
  await sharp(px, { raw: { width: w, height: h, channels: 1 } })
    .png()
    .toFile(file);
}
