/** Is an IPC message from our own page's main frame? Parsed with `new URL`, never by string prefix. */
import { APP_HOST, APP_SCHEME } from './window-options';

export function isTrustedSenderUrl(url: string | undefined | null): boolean {
  if (typeof url !== 'string' || url.length === 0) return false;
  let u: URL;
  try {
    u = new URL(url);
  } catch {
    return false;
  }
  return (
    u.protocol === `${APP_SCHEME}:` &&
    u.host === APP_HOST &&
    u.username === '' &&
    u.password === '' &&
    u.port === ''
  );
}

/** The sender frame must exist, be our page, and be the top frame (no subframes). */
export function checkSenderFrame(
  frame: { url: string; parent: unknown } | null | undefined,
): string | undefined {
  if (!frame) return 'no sender frame';
  if (frame.parent) return `sender ${frame.url} is a subframe`;
  if (!isTrustedSenderUrl(frame.url)) return `sender ${JSON.stringify(frame.url)} is not the Rankfold page`;
  return undefined;
}
