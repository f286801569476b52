/** IPC channel names shared by the main process and the preload: one per contract method, `rankfold:<method>`. */
export const CHANNEL_PREFIX = 'rankfold:';
/** Channels the main process sends on (the preload wraps them). */
export const EVENT_CHANNELS = {
  progress: 'rankfold:event:progress',
  openPath: 'rankfold:event:open-path',
  menu: 'rankfold:event:menu',
} as const;
