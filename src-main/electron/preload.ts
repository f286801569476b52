/**
 * Preload: exposes `window.rankfold`, a small allow-list of named functions (never ipcRenderer
 * itself). Event callbacks are wrapped so the IPC event object, which carries `sender`, never reaches
 * the page. Runs sandboxed, so it may require only 'electron'.
 */
import { contextBridge, ipcRenderer, webUtils } from 'electron';
import type { MenuCommand, ProgressEvent, RankfoldApi } from '../contract';

import { EVENT_CHANNELS as EVENTS, CHANNEL_PREFIX as PREFIX, UPLOAD_CHANNEL } from './channels';

async function call(method: string, payload?: unknown): Promise<unknown> {
  const r = (await ipcRenderer.invoke(PREFIX + method, payload)) as {
    ok: boolean;
    value?: unknown;
    error?: { name: string; message: string };
  };
  if (r.ok) return r.value;
  const e = new Error(r.error?.message ?? 'request failed');
  e.name = r.error?.name ?? 'Error';
  throw e;
}

function subscribe<T>(channel: string, cb: (v: T) => void): () => void {
  const listener = (_event: unknown, value: T) => cb(value);
  ipcRenderer.on(channel, listener);
  return () => ipcRenderer.removeListener(channel, listener);
}

const api: RankfoldApi = {
  transport: () => 'ipc',
  listSamples: () => call('listSamples') as ReturnType<RankfoldApi['listSamples']>,
  listRecent: () => call('listRecent') as ReturnType<RankfoldApi['listRecent']>,
  upload: (name, bytes) =>
    ipcRenderer
      .invoke(UPLOAD_CHANNEL, name, bytes)
      .then((r: { ok: boolean; value?: string; error?: { message: string } }) => {
        if (!r.ok || !r.value) throw new Error(r.error?.message ?? 'upload failed');
        return r.value;
      }),
  pick: (req) => call('pick', req) as ReturnType<RankfoldApi['pick']>,
  openScan: (req) => call('openScan', req) as ReturnType<RankfoldApi['openScan']>,
  factors: (req) => call('factors', req) as Promise<ArrayBuffer>,
  evaluate: (req) => call('evaluate', req) as ReturnType<RankfoldApi['evaluate']>,
  clean: (req) => call('clean', req) as ReturnType<RankfoldApi['clean']>,
  fetchImages: (id) => call('fetchImages', id) as Promise<ArrayBuffer>,
  stackFrame: (req) => call('stackFrame', req) as Promise<ArrayBuffer>,
  save: (req) => call('save', req) as ReturnType<RankfoldApi['save']>,
  batch: (req) => call('batch', req) as ReturnType<RankfoldApi['batch']>,
  openReport: async (id) => {
    await call('openReport', id);
  },
  cancel: async (job) => {
    await call('cancel', job);
  },
  onProgress: (cb) => subscribe<ProgressEvent>(EVENTS.progress, cb),
  onOpenPath: (cb) => subscribe<string>(EVENTS.openPath, cb),
  onMenuCommand: (cb) => subscribe<MenuCommand>(EVENTS.menu, cb),
  openDropped: async (file) => {
    const path = webUtils.getPathForFile(file as File);
    if (!path) return undefined;
    return call('dropped', path) as Promise<{ path: string; kind: 'file' | 'folder' }>;
  },
};

contextBridge.exposeInMainWorld('rankfold', api);
