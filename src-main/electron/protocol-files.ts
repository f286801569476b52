/** Map a request URL of the app scheme to a file of the built page (dist/renderer), or refuse it. */
import { extname, join, normalize, sep } from 'node:path';
import { APP_HOST, APP_SCHEME } from './window-options';

export const PAGE_TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.map': 'application/json',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.woff2': 'font/woff2',
};

export function resolvePageFile(
  requestUrl: string,
  rendererDir: string,
): { file: string; type: string } | undefined {
  let u: URL;
  try {
    u = new URL(requestUrl);
  } catch {
    return undefined;
  }
  if (u.protocol !== `${APP_SCHEME}:` || u.host !== APP_HOST) return undefined;
  let rel: string;
  try {
    rel = decodeURIComponent(u.pathname).replace(/^\/+/, '') || 'index.html';
  } catch {
    return undefined;
  }
  const root = normalize(rendererDir);
  const file = normalize(join(root, rel));
  if (!file.startsWith(root.endsWith(sep) ? root : root + sep)) return undefined;
  const type = PAGE_TYPES[extname(file)];
  return type ? { file, type } : undefined;
}
