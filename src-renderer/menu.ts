/**
 * The desktop shell's menu commands (the browser has none).
 */
import type { BatchPanel } from './batch-panel';
import type { Opener } from './open';
import type { SavePanel } from './save-panel';
import type { StatusBar } from './status';
import type { Tab } from './tabs';
import { isZoom, ZOOM } from './toolbar';
import type { PageApi } from './transport';
import type { CompareView } from './viewer';

export function setupMenu(
  api: PageApi,
  bar: StatusBar,
  view: CompareView,
  opener: Opener,
  batch: BatchPanel,
  save: SavePanel,
  selectTab: (t: Tab) => void,
): void {
  api.onMenuCommand?.((c) => {
    if (c === 'open')
      void api
        .pick({ kind: 'file' })
        .then((r) => (r.path ? opener.open({ kind: 'path', path: r.path }) : undefined), bar.fail);
    else if (c === 'open-folder')
      void api.pick({ kind: 'folder' }).then((r) => {
        if (r.path) batch.offerFolder(r.path);
      }, bar.fail);
    else if (c === 'save') {
      selectTab('save');
      save.run();
    } else if (c.startsWith('view-'))
      document.querySelector<HTMLButtonElement>(`[data-mode="${c.slice(5)}"]`)?.click();
    else if (isZoom(c)) ZOOM[c](view);
  });
}
