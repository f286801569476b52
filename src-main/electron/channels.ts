/** IPC channel names shared by the main process and the preload. */
export const CHANNEL_PREFIX = 'rankfold:';
/** Channels the main process sends on (the preload wraps them). */
export const EVENT_CHANNELS = {
  progress: 'rankfold:event:progress',
  openPath: 'rankfold:event:open-path',
  menu: 'rankfold:event:menu',
} as const;
/** Desktop-only request: bytes of a file picked in the page. */
export const UPLOAD_CHANNEL = 'rankfold:upload';
