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
import { randomBytes } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import {
  MAX_UPLOAD_BYTES,
  type ProgressEvent,
  type Reply,
  replyTo,
  toErrorPayload,
  UsageError,
  validateRequest,
} from '../../contract';
import type { Backend } from './backend';
import {
  checkHostAndOrigin,
  checkRequestShape,
  SECURITY_HEADERS,
  tokenMatches,
  uploadName,
} from './http-guards';
import { resolvePagePath } from './static-files';

/** Largest JSON request body: requests are small descriptions, never pixel data. */
const MAX_JSON_BYTES = 1 << 20;

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

/** A guard's refusal: `Refused: <reason>` under the guard's own error name. */
function refuse(res: ServerResponse, status: number, name: string, reason: string) {
  send(res, status, JSON.stringify({ ok: false, error: { name, message: `Refused: ${reason}` } }));
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
      if (malformed) return refuse(res, 400, 'BadRequest', malformed);
      const refusal = checkHostAndOrigin(req.headers, port);
      if (refusal) return refuse(res, 403, 'Forbidden', refusal);
      // Origin-form targets are appended to our origin, so `//name/...` stays a path; an absolute-form target
      // (RFC 9112 §3.2.2) must name this listener, as Host must.
      const target = req.url ?? '/';
      const url = new URL(target.startsWith('/') ? `http://127.0.0.1:${port}${target}` : target);
      if (!target.startsWith('/') && checkHostAndOrigin({ host: url.host }, port))
        return refuse(res, 403, 'Forbidden', `request target ${url.host} is not this loopback server`);
      if (url.pathname.startsWith('/api/')) {
        const given = req.headers['x-rankfold-token'] ?? url.searchParams.get('token');
        if (!tokenMatches(Array.isArray(given) ? given[0] : given, token))
          return refuse(res, 401, 'Unauthorized', 'missing or wrong token');
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
    const hit = resolvePagePath(options.staticDir, pathname);
    if (!('file' in hit)) return send(res, hit.status, hit.message, 'text/plain');
    const data = await readFile(hit.file).catch(() => undefined);
    if (!data) return send(res, 404, 'not found', 'text/plain');
    send(res, 200, data, hit.type);
  }

  /** Send a call's reply: bytes for a binary result, JSON otherwise; a failed call is 422. */
  function sendReply(res: ServerResponse, reply: Reply) {
    if (reply.ok && reply.value instanceof ArrayBuffer)
      return send(res, 200, new Uint8Array(reply.value), 'application/octet-stream');
    send(res, reply.ok ? 200 : 422, JSON.stringify(reply));
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
    if (req.method !== 'POST') return sendError(res, 405, new UsageError('Use POST'));
    if (what === 'upload') {
      // The one binary request: the name in ?name= (strictly decoded), the bytes as the body.
      const name = uploadName(url.search);
      const call = validateRequest('upload', { name, bytes: await readBody(req, MAX_UPLOAD_BYTES) }, 'http');
      return sendReply(res, await replyTo(() => backend.call(call.method, call.payload)));
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
      // The upload's bytes travel as a body of their own (above), never inside JSON.
      if (parts[2] === 'upload')
        throw new UsageError('Upload sends the file bytes as the body of /api/upload?name=, not as JSON');
      const call = validateRequest(parts[2], payload, 'http');
      return sendReply(res, await replyTo(() => backend.call(call.method, call.payload)));
    }
    return sendError(res, 404, new UsageError(`No API ${url.pathname}`));
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
