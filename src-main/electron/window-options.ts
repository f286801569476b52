/**
 * The one place that builds the main window's options and the page's security policy, so sandbox,
 * context isolation and Node integration are set once (after VS Code's Electron layering).
 */
import type { BrowserWindowConstructorOptions } from 'electron';

/** The page is served from this privileged custom scheme through protocol.handle, never file://. */
export const APP_SCHEME = 'rankfold';
export const APP_HOST = 'app';
const APP_ORIGIN = `${APP_SCHEME}://${APP_HOST}`;
export const APP_URL = `${APP_ORIGIN}/index.html`;

/** Strict CSP for the desktop page: only our own scheme, no inline script, no eval, no remote content. */
export const DESKTOP_CSP = [
  "default-src 'none'",
  `script-src ${APP_ORIGIN}`,
  `style-src ${APP_ORIGIN}`,
  `img-src ${APP_ORIGIN} blob: data:`,
  `connect-src ${APP_ORIGIN}`,
  `worker-src ${APP_ORIGIN} blob:`,
  `font-src ${APP_ORIGIN}`,
  "frame-ancestors 'none'",
  "base-uri 'none'",
  "form-action 'none'",
  "object-src 'none'",
].join('; ');

/** Headers on every response of the app scheme (CSP, and COOP/COEP for SharedArrayBuffer). */
export const DESKTOP_HEADERS: Record<string, string> = {
  'Content-Security-Policy': DESKTOP_CSP,
  'Cross-Origin-Opener-Policy': 'same-origin',
  'Cross-Origin-Embedder-Policy': 'require-corp',
  'Cross-Origin-Resource-Policy': 'same-origin',
  'X-Content-Type-Options': 'nosniff',
};

/**
 * Options of the main window.
 * @param preload absolute path of the built preload script (dist/electron/preload.cjs).
 * @example new BrowserWindow(buildWindowOptions(join(__dirname, 'preload.cjs')))
 */
export function buildWindowOptions(preload: string): BrowserWindowConstructorOptions {
  return {
    width: 1440,
    height: 900,
    minWidth: 1024,
    minHeight: 680,
    title: 'Rankfold',
    backgroundColor: '#efe9dc',
    show: false,
    webPreferences: {
      preload,
      contextIsolation: true,
      sandbox: true,
      nodeIntegration: false,
      nodeIntegrationInWorker: false,
      nodeIntegrationInSubFrames: false,
      webSecurity: true,
      allowRunningInsecureContent: false,
      webviewTag: false,
      navigateOnDragDrop: false,
      spellcheck: false,
      devTools: true,
    },
  };
}
