/**
 * The built page's files (dist/renderer), as browser mode (./http.ts) and the desktop app's `rankfold://app`
 * scheme (src-main/electron/protocol-files.ts) both serve them: one path resolver and one MIME table.
 */
import { extname, join, normalize, sep } from 'node:path';
import { hasControl } from '../../contract';

/** Content types of the files the page is built from; anything else is not served. */
const PAGE_TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.map': 'application/json',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.woff2': 'font/woff2',
};

export type PageFile = { file: string; type: string } | { status: 400 | 404; message: string };

/**
 * Map a URL path (still percent-encoded) to a file under `root`: `/` is index.html; a path that does not
 * decode, holds control characters, leaves `root` or has a type not in {@link PAGE_TYPES} is refused.
 */
export function resolvePagePath(root: string, pathname: string): PageFile {
  let rel: string;
  try {
    rel = decodeURIComponent(pathname).replace(/^\/+/, '') || 'index.html';
  } catch {
    return { status: 400, message: 'bad request: the path is not valid percent-encoded UTF-8' };
  }
  if (hasControl(rel)) return { status: 400, message: 'bad request: the path contains control characters' };
  const base = normalize(root);
  const file = normalize(join(base, rel));
  if (!file.startsWith(base.endsWith(sep) ? base : base + sep)) return { status: 404, message: 'not found' };
  const type = PAGE_TYPES[extname(file)];
  return type ? { file, type } : { status: 404, message: 'not found' };
}
