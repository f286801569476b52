/**
 * Browser mode: the page and its API on 127.0.0.1 only.
 *
 * Guards, applied to every request before anything else:
 * - Host must name this loopback listener (127.0.0.1 or localhost with our port), against DNS
 *   rebinding (a hostile name that resolves to 127.0.0.1 carries its own name in Host);
 * - Origin, when sent, must be our own origin, and `Sec-Fetch-Site: cross-site` is refused, against
 *   cross-site requests from other pages in the same browser;
 * - every /api/ request must carry the per-run token (header `X-Rankfold-Token`, or `?token=` for the
 *   event stream, downloads and reports, which the browser fetches by URL), compared in constant time.
 * Responses carry COOP/COEP (so SharedArrayBuffer works in the page), a strict CSP and no-store.
 */
import { randomBytes, timingSafeEqual } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { extname, join, normalize, sep } from 'node:path';
import { type ProgressEvent, toErrorPayload, UsageError, validateRequest } from '../../contract';
import { type Backend, MAX_UPLOAD_BYTES } from './backend';

/** Largest JSON request body: requests are small descriptions, never pixel data. */
const MAX_JSON_BYTES = 1 << 20;

export const CONTENT_SECURITY_POLICY = [
  "default-src 'none'",
  "script-src 'self'",
  "style-src 'self'",
  "img-src 'self' blob: data:",
  "connect-src 'self'",
  "worker-src 'self' blob:",
  "font-src 'self'",
  "frame-ancestors 'none'",
  "base-uri 'none'",
  "form-action 'none'",
].join('; ');

const SECURITY_HEADERS: Record<string, string> = {
  'Content-Security-Policy': CONTENT_SECURITY_POLICY,
  'Cross-Origin-Opener-Policy': 'same-origin',
  'Cross-Origin-Embedder-Policy': 'require-corp',
  'Cross-Origin-Resource-Policy': 'same-origin',
  'X-Content-Type-Options': 'nosniff',
  'Referrer-Policy': 'no-referrer',
  'X-Frame-Options': 'DENY',
  'Cache-Control': 'no-store',
};

const TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.map': 'application/json',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.woff2': 'font/woff2',
};

export interface ServeOptions {
  port?: number;
  /** Folder with index.html, app.js and the css (dist/renderer). */
  staticDir: string;
  backend: Backend;
  /** Fixed token (tests); default is 32 random bytes. */
  token?: string;
}

export interface RunningServer {
  server: Server;
  port: number;
  token: string;
  url: string;
  close(): Promise<void>;
}

/** Why a request is refused, or undefined when its Host and Origin are ours. */
export function checkHostAndOrigin(headers: IncomingMessage['headers'], port: number): string | undefined {
  const allowedHosts = new Set([`127.0.0.1:${port}`, `localhost:${port}`]);
  const host = headers.host;
  if (!host || !allowedHosts.has(host.toLowerCase()))
    return `Host ${JSON.stringify(host ?? '')} is not this loopback server`;
  const origin = headers.origin;
  if (origin !== undefined) {
    let o: URL;
    try {
      o = new URL(origin);
    } catch {
      return `Origin ${JSON.stringify(origin)} is not a URL`;
    }
    if (o.protocol !== 'http:' || !allowedHosts.has(o.host.toLowerCase()) || o.origin !== origin)
      return `Origin ${JSON.stringify(origin)} is not this page`;
  }
  const site = headers['sec-fetch-site'];
  if (site === 'cross-site') return 'cross-site request';
  return undefined;
}

/** Constant-time token comparison. */
export function tokenMatches(given: string | null | undefined, token: string): boolean {
  if (typeof given !== 'string') return false;
  const a = Buffer.from(given);
  const b = Buffer.from(token);
  return a.length === b.length && timingSafeEqual(a, b);
}

function send(
  res: ServerResponse,
  status: number,
  body: string | Uint8Array,
  type = 'application/json; charset=utf-8',
  extra: Record<string, string> = {},
) {
  res.writeHead(status, { ...SECURITY_HEADERS, 'Content-Type': type, ...extra });
  res.end(body);
}

function sendError(res: ServerResponse, status: number, err: unknown) {
  send(res, status, JSON.stringify({ ok: false, error: toErrorPayload(err) }));
}

async function readBody(req: IncomingMessage, limit: number): Promise<Buffer> {
  const declared = Number(req.headers['content-length'] ?? 0);
  if (declared > limit)
    throw new UsageError(`Request body of ${declared} bytes is over the limit of ${limit} bytes`);
  const chunks: Buffer[] = [];
  let size = 0;
  for await (const c of req) {
    size += (c as Buffer).length;
    if (size > limit) throw new UsageError(`Request body is over the limit of ${limit} bytes`);
    chunks.push(c as Buffer);
  }
  return Buffer.concat(chunks);
}

/** Start browser mode. Resolves once listening. */
export async function startServer(options: ServeOptions): Promise<RunningServer> {
  const token = options.token ?? randomBytes(32).toString('base64url');
  const { backend } = options;
  const streams = new Set<ServerResponse>();
  const onProgress = (e: ProgressEvent) => {
    const line = `event: progress\ndata: ${JSON.stringify(e)}\n\n`;
    for (const s of streams) s.write(line);
  };
  backend.on('progress', onProgress);
  let port = 0;

  const server = createServer(async (req, res) => {
    try {
      const refusal = checkHostAndOrigin(req.headers, port);
      if (refusal)
        return send(
          res,
          403,
          JSON.stringify({ ok: false, error: { name: 'Forbidden', message: `Refused: ${refusal}` } }),
        );
      const url = new URL(req.url ?? '/', `http://127.0.0.1:${port}`);
      if (url.pathname.startsWith('/api/')) {
        const given = req.headers['x-rankfold-token'] ?? url.searchParams.get('token');
        if (!tokenMatches(Array.isArray(given) ? given[0] : given, token))
          return send(
            res,
            401,
            JSON.stringify({
              ok: false,
              error: { name: 'Unauthorized', message: 'Refused: missing or wrong token' },
            }),
          );
        return await api(req, res, url);
      }
      if (req.method !== 'GET' && req.method !== 'HEAD')
        return send(res, 405, 'method not allowed', 'text/plain');
      return await serveStatic(res, url.pathname);
    } catch (err) {
      if (!res.headersSent) sendError(res, err instanceof UsageError ? 400 : 500, err);
      else res.end();
    }
  });

  async function serveStatic(res: ServerResponse, pathname: string) {
    const rel = pathname === '/' ? 'index.html' : decodeURIComponent(pathname.slice(1));
    const file = normalize(join(options.staticDir, rel));
    if (!file.startsWith(normalize(options.staticDir) + sep))
      return send(res, 404, 'not found', 'text/plain');
    const type = TYPES[extname(file)];
    if (!type) return send(res, 404, 'not found', 'text/plain');
    const data = await readFile(file).catch(() => undefined);
    if (!data) return send(res, 404, 'not found', 'text/plain');
    send(res, 200, data, type);
  }

  async function api(req: IncomingMessage, res: ServerResponse, url: URL) {
    const parts = url.pathname.split('/').filter(Boolean); // ['api', what, arg?]
    const what = parts[1];
    if (what === 'events' && req.method === 'GET') {
      res.writeHead(200, {
        ...SECURITY_HEADERS,
        'Content-Type': 'text/event-stream',
        Connection: 'keep-alive',
      });
      res.write(': rankfold progress\n\n');
      streams.add(res);
      const ping = setInterval(() => res.write(': ping\n\n'), 15_000);
      req.on('close', () => {
        clearInterval(ping);
        streams.delete(res);
      });
      return;
    }
    if (what === 'download' && req.method === 'GET' && parts[2]) {
      const b = backend.blob(parts[2]);
      return send(res, 200, new Uint8Array(b.data), b.type, {
        'Content-Disposition': `attachment; filename="${b.fileName.replace(/[^A-Za-z0-9._-]/g, '_')}"`,
      });
    }
    if (what === 'report' && req.method === 'GET' && parts[2]) {
      const html = await readFile(backend.reportPath(parts[2]));
      return send(res, 200, html, 'text/html; charset=utf-8', {
        'Content-Security-Policy': "default-src 'none'; style-src 'unsafe-inline'; img-src data:",
      });
    }
    if (req.method !== 'POST')
      return send(
        res,
        405,
        JSON.stringify({ ok: false, error: { name: 'UsageError', message: 'Use POST' } }),
      );
    if (what === 'upload') {
      const name = url.searchParams.get('name') ?? '';
      if (!name) throw new UsageError('Upload needs ?name= with the file name');
      const body = await readBody(req, MAX_UPLOAD_BYTES);
      const id = await backend.upload(name, body);
      return send(res, 200, JSON.stringify({ ok: true, value: id }));
    }
    if (what === 'call' && parts[2]) {
      const type = String(req.headers['content-type'] ?? '');
      if (!type.startsWith('application/json'))
        throw new UsageError('API calls must send Content-Type: application/json');
      const body = await readBody(req, MAX_JSON_BYTES);
      let payload: unknown;
      try {
        payload = body.length ? JSON.parse(body.toString('utf8')) : undefined;
      } catch {
        throw new UsageError('Request body is not valid JSON');
      }
      const call = validateRequest(parts[2], payload);
      try {
        const value = await backend.call(call.method, call.payload);
        if (value instanceof ArrayBuffer)
          return send(res, 200, new Uint8Array(value), 'application/octet-stream');
        return send(res, 200, JSON.stringify({ ok: true, value: value ?? null }));
      } catch (err) {
        return sendError(res, 422, err);
      }
    }
    return send(
      res,
      404,
      JSON.stringify({ ok: false, error: { name: 'UsageError', message: `No API ${url.pathname}` } }),
    );
  }

  await new Promise<void>((resolveListen, reject) => {
    server.once('error', reject);
    server.listen(options.port ?? 0, '127.0.0.1', () => resolveListen());
  });
  port = (server.address() as AddressInfo).port;
  const url = `http://127.0.0.1:${port}/?token=${token}`;
  return {
    server,
    port,
    token,
    url,
    async close() {
      backend.off('progress', onProgress);
      for (const s of streams) s.end();
      await new Promise<void>((r) => server.close(() => r()));
      server.closeAllConnections?.();
    },
  };
}
