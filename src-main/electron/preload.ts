/**
 * Preload: exposes `window.rankfold`, a small allow-list of named functions (never ipcRenderer
 * itself). The call stubs come from the contract's method table; event callbacks are wrapped so the IPC
 * event object, which carries `sender`, never reaches the page. Runs sandboxed: it requires only
 * 'electron', and the contract is bundled in.
 */
import { contextBridge, ipcRenderer, webUtils } from 'electron';
import { apiCalls, type MenuCommand, type ProgressEvent, type RankfoldApi, unwrapReply } from '../contract';
import { EVENT_CHANNELS as EVENTS, CHANNEL_PREFIX as PREFIX } from './channels';

const calls = apiCalls(async (method, payload) =>
  unwrapReply(await ipcRenderer.invoke(PREFIX + method, payload)),
);

function subscribe<T>(channel: string, cb: (v: T) => void): () => void {
  const listener = (_event: unknown, value: T) => cb(value);
  ipcRenderer.on(channel, listener);
  return () => ipcRenderer.removeListener(channel, listener);
}

const api: RankfoldApi = {
  transport: () => 'ipc',
  listSamples: calls.listSamples,
  listRecent: calls.listRecent,
  upload: (name, bytes) => calls.upload({ name, bytes: new Uint8Array(bytes) }),
  pick: calls.pick,
  openScan: calls.openScan,
  factors: calls.factors,
  evaluate: calls.evaluate,
  clean: calls.clean,
  fetchImages: calls.fetchImages,
  stackFrame: calls.stackFrame,
  save: calls.save,
  batch: calls.batch,
  openReport: async (id) => {
    await calls.openReport(id);
  },
  cancel: calls.cancel,
  onProgress: (cb) => subscribe<ProgressEvent>(EVENTS.progress, cb),
  onOpenPath: (cb) => subscribe<string>(EVENTS.openPath, cb),
  onMenuCommand: (cb) => subscribe<MenuCommand>(EVENTS.menu, cb),
  openDropped: async (file) => {
    const path = webUtils.getPathForFile(file as File);
    return path ? calls.dropped(path) : undefined;
  },
};

contextBridge.exposeInMainWorld('rankfold', api);
