/**
 * The page's view of the API, apart from ./api (the request and result types) and ./methods (the method
 * table it is built from), so that neither of those two imports the other.
 */
import type { DroppedResult, MenuCommand, ProgressEvent } from './api';
import type { ApiCalls } from './methods';

/**
 * The API the page calls. Both transports implement it; every method rejects with a RankfoldError payload.
 * The request/result methods (and their docs) come from the method table in ./methods; only the calls
 * whose page-side form differs from the wire form are written here.
 */
export interface RankfoldApi extends Omit<ApiCalls, 'upload' | 'openReport' | 'dropped'> {
  transport(): 'ipc' | 'http';
  /** Upload bytes of a file the user picked in the page (browser mode); returns an upload id. */
  upload(name: string, bytes: ArrayBuffer): Promise<string>;
  /** Show a batch report: the system viewer (desktop) or a new tab (browser mode). */
  openReport(reportId: string): Promise<void>;
  /** Subscribe to progress; returns an unsubscribe function. The callback never sees a transport event object. */
  onProgress(cb: (e: ProgressEvent) => void): () => void;
  /** Files dropped on or opened from the shell (menu, recent files, drag-drop in Electron). */
  onOpenPath(cb: (path: string) => void): () => void;
  /** Desktop only: a file or folder dropped on the window (a DOM File); the shell records it as chosen. */
  openDropped?(file: unknown): Promise<DroppedResult | undefined>;
  /** Desktop only: menu commands (open, save, view modes, zoom). */
  onMenuCommand?(cb: (command: MenuCommand) => void): () => void;
}
