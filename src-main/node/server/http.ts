/**
 * Browser mode: the page and its API on 127.0.0.1 only.
 *
 * Guards, applied to every request before anything else:
 * - exactly one Host header line, or 400: RFC 9112 §3.2, "A server MUST respond with a 400 (Bad Request)
 *   status code to any HTTP/1.1 request message that lacks a Host header field and to any request message
 *   that contains more than one Host header field line or a Host header field with an invalid field value".
 *   Node keeps only the first of repeated Host lines in `req.headers`, so the lines are counted in
 *   `req.rawHeaders`. The request target must be a path (origin-form) or an absolute http URL naming us
 *   (absolute-form, RFC 9112 §3.2.2), or 400;
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
import { InputError, type ProgressEvent, toErrorPayload, UsageError, validateRequest } from '../../contract';
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

/** True when `s` holds a C0 control character, DEL or (with `c1`) a C1 control character. */
function hasControl(s: string, c1 = false): boolean {
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c < 0x20 || c === 0x7f || (c1 && c >= 0x80 && c <= 0x9f)) return true;
  }
  return false;
}

/** RFC 9110 §7.2 / RFC 3986 §3.2.2–3.2.3: host [":" port], with no spaces, commas, userinfo or paths. */
const HOST_VALUE = /^(?:\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9._~%!$&'()*+;=-]+)(?::[0-9]*)?$/;

/**
 * Why a request is malformed at the HTTP level (400), or undefined. Counts Host lines in `rawHeaders`
 * (name/value pairs as received) and checks the request target.
 */
export function checkRequestShape(rawHeaders: string[], target: string | undefined): string | undefined {
  const hosts: string[] = [];
  for (let i = 0; i + 1 < rawHeaders.length; i += 2)
    if (rawHeaders[i].toLowerCase() === 'host') hosts.push(rawHeaders[i + 1]);
  if (hosts.length === 0) return 'the request has no Host header';
  if (hosts.length > 1) return `the request has ${hosts.length} Host headers; send exactly one`;
  if (!HOST_VALUE.test(hosts[0])) return `Host ${JSON.stringify(hosts[0].slice(0, 200))} is not a valid host`;
  const t = target ?? '';
  if (t.startsWith('/')) {
    if (hasControl(t) || t.includes(' ')) return 'the request target contains control characters or spaces';
    return undefined;
  }
  if (/^http:\/\//i.test(t)) {
    try {
      new URL(t);
      return undefined;
    } catch {
      return 'the request target is not a valid URL';
    }
  }
  return 'the request target must be a path starting with /';
}

/** Longest upload name in UTF-8 bytes: NAME_MAX of common Linux, macOS and Windows file systems (from memory). */
export const MAX_UPLOAD_NAME_BYTES = 255;

/**
 * The upload's file name from the raw query string, decoded strictly: the `name` parameter exactly once,
 * percent-encoding that decodes to valid UTF-8 (RFC 3986 §2.5; WHATWG URLSearchParams would silently turn bad
 * bytes into U+FFFD), and a plain file name: not empty, not `.` or `..`, no `/` or `\`, no NUL or other
 * control characters, at most 255 UTF-8 bytes.
 * @throws UsageError with one sentence naming the problem.
 */
export function uploadName(search: string): string {
  const raw = search.replace(/^\?/, '');
  const values = raw
    .split('&')
    .filter((p) => p === 'name' || p.startsWith('name='))
    .map((p) => p.slice(5));
  if (values.length === 0) throw new UsageError('Upload needs ?name= with the file name');
  if (values.length > 1) throw new UsageError('Upload takes one ?name=, not several');
  let name: string;
  try {
    name = decodeURIComponent(values[0].replace(/\+/g, ' '));
  } catch {
    throw new UsageError('Upload name is not valid percent-encoded UTF-8');
  }
  const shown = JSON.stringify(name.length > 80 ? `${name.slice(0, 80)}…` : name);
  if (name === '') throw new UsageError('Upload name is empty; send the file name in ?name=');
  if (name === '.' || name === '..') throw new UsageError(`Upload name ${shown} is not a file name`);
  if (/[/\\]/.test(name))
    throw new UsageError(`Upload name ${shown} contains a folder separator; send the file name alone`);
  if (hasControl(name, true))
    throw new UsageError(`Upload name ${shown} contains a NUL or other control character`);
  if (Buffer.byteLength(name, 'utf8') > MAX_UPLOAD_NAME_BYTES)
    throw new UsageError(`Upload name ${shown} is longer than ${MAX_UPLOAD_NAME_BYTES} bytes`);
  return name;
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
      const malformed = checkRequestShape(req.rawHeaders, req.url);
      if (malformed)
        return send(
          res,
          400,
          JSON.stringify({ ok: false, error: { name: 'BadRequest', message: `Refused: ${malformed}` } }),
        );
      const refusal = checkHostAndOrigin(req.headers, port);
      if (refusal)
        return send(
          res,
          403,
          JSON.stringify({ ok: false, error: { name: 'Forbidden', message: `Refused: ${refusal}` } }),
        );
      // Origin-form targets are appended to our origin, so `//name/...` stays a path; an absolute-form target
      // (RFC 9112 §3.2.2) must name this listener, as Host must.
      const target = req.url ?? '/';
      const url = new URL(target.startsWith('/') ? `http://127.0.0.1:${port}${target}` : target);
      if (!target.startsWith('/') && checkHostAndOrigin({ host: url.host }, port))
        return send(
          res,
          403,
          JSON.stringify({
            ok: false,
            error: {
              name: 'Forbidden',
              message: `Refused: request target ${url.host} is not this loopback server`,
            },
          }),
        );
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
    let rel: string;
    try {
      rel = pathname === '/' ? 'index.html' : decodeURIComponent(pathname.slice(1));
    } catch {
      return send(res, 400, 'bad request: the path is not valid percent-encoded UTF-8', 'text/plain');
    }
    if (hasControl(rel))
      return send(res, 400, 'bad request: the path contains control characters', 'text/plain');
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
      const name = uploadName(url.search);
      const body = await readBody(req, MAX_UPLOAD_BYTES);
      let id: string;
      try {
        id = await backend.upload(name, body);
      } catch (err) {
        // The name's extension is not a scan type: the client's mistake, not ours.
        if (err instanceof InputError) throw new UsageError(err.message);
        throw err;
      }
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

  // CONNECT (a proxy tunnel) is not served here. Without a listener Node drops the connection with no answer;
  // say 405 instead, as for any other method we do not serve.
  server.on('connect', (_req, socket) => {
    const body = 'method not allowed';
    socket.end(
      `HTTP/1.1 405 Method Not Allowed\r\nContent-Type: text/plain\r\nContent-Length: ${body.length}\r\nConnection: close\r\n\r\n${body}`,
    );
  });

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
