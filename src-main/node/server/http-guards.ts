/**
 * The guards of browser mode, applied to every request before anything else (see ./http.ts for the list
 * and their sources), and the headers every response carries.
 */
import { timingSafeEqual } from 'node:crypto';
import type { IncomingMessage } from 'node:http';
import { checkUploadName, hasControl, UsageError } from '../../contract';

const CONTENT_SECURITY_POLICY = [
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

export const SECURITY_HEADERS: Record<string, string> = {
  'Content-Security-Policy': CONTENT_SECURITY_POLICY,
  'Cross-Origin-Opener-Policy': 'same-origin',
  'Cross-Origin-Embedder-Policy': 'require-corp',
  'Cross-Origin-Resource-Policy': 'same-origin',
  'X-Content-Type-Options': 'nosniff',
  'Referrer-Policy': 'no-referrer',
  'X-Frame-Options': 'DENY',
  'Cache-Control': 'no-store',
};

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

/**
 * The upload's file name from the raw query string, decoded strictly: the `name` parameter exactly once and
 * percent-encoding that decodes to valid UTF-8 (RFC 3986 §2.5; WHATWG URLSearchParams would silently turn bad
 * bytes into U+FFFD). The name itself is then checked by the contract's upload validator (checkUploadName):
 * a plain scan file name of at most 255 UTF-8 bytes.
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
  return checkUploadName(name);
}

/** Constant-time token comparison. */
export function tokenMatches(given: string | null | undefined, token: string): boolean {
  if (typeof given !== 'string') return false;
  const a = Buffer.from(given);
  const b = Buffer.from(token);
  return a.length === b.length && timingSafeEqual(a, b);
}
