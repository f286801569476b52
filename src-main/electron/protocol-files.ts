/** Map a request URL of the app scheme to a file of the built page (dist/renderer), or refuse it. */
import { resolvePagePath } from '../node/server/static-files';
import { APP_HOST, APP_SCHEME } from './window-options';

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
  const hit = resolvePagePath(rendererDir, u.pathname);
  return 'file' in hit ? hit : undefined;
}
