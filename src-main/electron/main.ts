/**
 * Electron main process: the desktop window around the same page and back end as browser mode.
 * The page is served from the privileged `rankfold://app` scheme through protocol.handle; navigation,
 * new windows and permission requests are denied; every IPC call goes through ./ipc.ts.
 */
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { app, BrowserWindow, dialog, ipcMain, Menu, protocol, session, shell } from 'electron';
import type { ApiMethod, MenuCommand, PickRequest } from '../contract';
import { Backend } from '../node/server/backend';
import { EVENT_CHANNELS } from './channels';
import { registerIpc } from './ipc';
import { buildMenuTemplate } from './menu';
import { resolvePageFile } from './protocol-files';
import { APP_SCHEME, APP_URL, buildWindowOptions, DESKTOP_HEADERS } from './window-options';

// dist/electron/main.cjs → dist/
const dist = join(__dirname, '..');
const rendererDir = join(dist, 'renderer');
const SCAN_FILTERS = [{ name: 'Scans', extensions: ['png', 'tif', 'tiff', 'jpg', 'jpeg', 'webp'] }];
const MAX_RECENT = 10;

protocol.registerSchemesAsPrivileged([
  {
    scheme: APP_SCHEME,
    privileges: { standard: true, secure: true, supportFetchAPI: true, corsEnabled: false, stream: true },
  },
]);

let win: BrowserWindow | undefined;
let recent: string[] = [];
const recentFile = () => join(app.getPath('userData'), 'recent-scans.json');

async function loadRecent() {
  try {
    const v = JSON.parse(await readFile(recentFile(), 'utf8'));
    if (Array.isArray(v)) recent = v.filter((x) => typeof x === 'string').slice(0, MAX_RECENT);
  } catch {
    recent = [];
  }
}

function addRecent(path: string) {
  recent = [path, ...recent.filter((p) => p !== path)].slice(0, MAX_RECENT);
  app.addRecentDocument(path);
  void writeFile(recentFile(), JSON.stringify(recent)).catch(() => undefined);
  buildMenu();
}

function send(channel: string, value: unknown) {
  win?.webContents.send(channel, value);
}

function buildMenu() {
  Menu.setApplicationMenu(
    Menu.buildFromTemplate(
      buildMenuTemplate(recent, {
        command: (c: MenuCommand) => send(EVENT_CHANNELS.menu, c),
        openRecent: (p) => {
          void backend.allow(p, 'file').then(
            (real) => send(EVENT_CHANNELS.openPath, real),
            (err) => dialog.showErrorBox('Rankfold', String(err instanceof Error ? err.message : err)),
          );
        },
        clearRecent: () => {
          recent = [];
          app.clearRecentDocuments();
          void writeFile(recentFile(), '[]').catch(() => undefined);
          buildMenu();
        },
        quit: () => app.quit(),
      }),
    ),
  );
}

async function picker(req: PickRequest): Promise<string | undefined> {
  if (!win) return undefined;
  if (req.kind === 'save') {
    const r = await dialog.showSaveDialog(win, { defaultPath: req.suggested, title: 'Save' });
    return r.canceled ? undefined : r.filePath;
  }
  const r = await dialog.showOpenDialog(win, {
    title: req.kind === 'folder' ? 'Choose a folder' : 'Open a scan',
    defaultPath: req.suggested,
    properties: req.kind === 'folder' ? ['openDirectory', 'createDirectory'] : ['openFile'],
    filters: req.kind === 'file' ? SCAN_FILTERS : undefined,
  });
  return r.canceled ? undefined : r.filePaths[0];
}

const backend = new Backend({
  workersDir: join(dist, 'workers'),
  samplesDir: join(dist, '..', 'samples'),
  picker,
  recent: { list: () => [...recent], add: addRecent },
});
backend.on('progress', (e) => send(EVENT_CHANNELS.progress, e));

function createWindow() {
  win = new BrowserWindow(buildWindowOptions(join(__dirname, 'preload.cjs')));
  const wc = win.webContents;
  wc.on('will-navigate', (e, url) => {
    if (url !== APP_URL) e.preventDefault();
  });
  wc.on('will-redirect', (e) => e.preventDefault());
  wc.on('will-attach-webview', (e) => e.preventDefault());
  wc.setWindowOpenHandler(({ url }) => {
    // Reports and links open in the system browser or viewer, never in a new app window.
    if (/^https:\/\//.test(url)) void shell.openExternal(url);
    return { action: 'deny' };
  });
  win.once('ready-to-show', () => win?.show());
  win.on('closed', () => {
    win = undefined;
  });
  void win.loadURL(APP_URL);
}

app.on('web-contents-created', (_e, contents) => {
  contents.on('will-navigate', (e, url) => {
    if (url !== APP_URL) e.preventDefault();
  });
  contents.setWindowOpenHandler(() => ({ action: 'deny' }));
});

app.whenReady().then(async () => {
  await loadRecent();
  const ses = session.defaultSession;
  ses.setPermissionRequestHandler((_wc, _permission, callback) => callback(false));
  ses.setPermissionCheckHandler(() => false);
  if ('setDevicePermissionHandler' in ses) ses.setDevicePermissionHandler(() => false);
  protocol.handle(APP_SCHEME, async (request) => {
    const hit = resolvePageFile(request.url, rendererDir);
    if (!hit) return new Response('not found', { status: 404, headers: DESKTOP_HEADERS });
    try {
      return new Response(await readFile(hit.file), {
        headers: { ...DESKTOP_HEADERS, 'Content-Type': hit.type },
      });
    } catch {
      return new Response('not found', { status: 404, headers: DESKTOP_HEADERS });
    }
  });
  registerIpc(ipcMain, {
    call: async (method: ApiMethod, payload: unknown) => {
      const value = await backend.call(method, payload);
      if (method === 'openReport' && typeof value === 'string') {
        const err = await shell.openPath(value);
        if (err) throw new Error(`${value}: ${err}`);
        return undefined;
      }
      return value;
    },
  });
  buildMenu();
  createWindow();
  // Files given on the command line (`npm start -- scan.tif`) open once the page is up.
  const files = process.argv.slice(app.isPackaged ? 1 : 2).filter((a) => !a.startsWith('-'));
  win?.webContents.once('did-finish-load', () => {
    for (const f of files.slice(0, 1))
      void backend.allow(f, 'file').then(
        (real) => send(EVENT_CHANNELS.openPath, real),
        () => undefined,
      );
  });
  app.on('activate', () => {
    if (BrowserWindow.getAllWindows().length === 0) createWindow();
  });
});

app.on('window-all-closed', () => {
  void backend.close().finally(() => {
    if (process.platform !== 'darwin') app.quit();
  });
});
