/**
 * Drag and drop on the compare stage: files upload (browser) or open by path (desktop); a dropped folder
 * fills the batch input.
 */

import type { BatchPanel } from './batch-panel';
import { bind } from './bind';
import type { Opener } from './open';
import type { StatusBar } from './status';
import type { Tab } from './tabs';
import type { PageApi } from './transport';

export function setupDrop(
  api: PageApi,
  bar: StatusBar,
  opener: Opener,
  batch: BatchPanel,
  selectTab: (t: Tab) => void,
): void {
  const stage = bind(document, { stage: '#stage' }).stage;
  stage.addEventListener('dragover', (e) => {
    e.preventDefault();
    stage.classList.add('dragover');
  });
  stage.addEventListener('dragleave', () => stage.classList.remove('dragover'));
  stage.addEventListener('drop', (e) => {
    e.preventDefault();
    stage.classList.remove('dragover');
    const dropped = e.dataTransfer?.files?.[0];
    if (dropped && api.openDropped) {
      // Desktop: the shell reads the real path of what was dropped (file or folder).
      void api.openDropped(dropped).then((r) => {
        if (!r) return;
        if (r.kind === 'file') return opener.openChosen(r.path);
        batch.offerFolder(r.path);
      }, bar.fail);
      return;
    }
    const items = [...(e.dataTransfer?.items ?? [])];
    const entry = items[0]?.webkitGetAsEntry?.();
    if (entry?.isDirectory) {
      bar.show('Folders go to the Batch tab: type the folder path there (the browser does not reveal it).');
      selectTab('batch');
      return;
    }
    const f = e.dataTransfer?.files?.[0];
    if (f) void opener.uploadAndOpen(f);
  });
}
