/**
 * The Scan card's two lists: the installed demo scans and the recently opened files.
 */
import { bind } from './bind';
import { recentLabel } from './captions';
import { formatBytes } from './format';
import type { PageApi } from './transport';

export interface ScanLists {
  refreshSamples(): Promise<void>;
  refreshRecent(): Promise<void>;
}

export function createScanLists(
  api: PageApi,
  openSample: (name: string) => void,
  openPath: (path: string) => void,
): ScanLists {
  const el = bind(document, { samples: 'ul#samples', recent: 'ul#recent' });
  const item = (label: string, title: string, onClick: () => void) => {
    const li = document.createElement('li');
    const b = document.createElement('button');
    b.textContent = label;
    b.title = title;
    b.addEventListener('click', onClick);
    li.append(b);
    return { li, b };
  };
  return {
    async refreshSamples() {
      const samples = await api.listSamples().catch(() => []);
      el.samples.replaceChildren(
        ...samples.map((s) => {
          const { li, b } = item(s.title, `${s.name} · ${formatBytes(s.bytes)}`, () => openSample(s.name));
          b.dataset.sample = s.name;
          return li;
        }),
      );
      if (!samples.length) el.samples.textContent = 'none installed (npm run samples)';
    },
    async refreshRecent() {
      const items = await api.listRecent().catch(() => []);
      el.recent.replaceChildren(...items.map((p) => item(recentLabel(p), p, () => openPath(p)).li));
    },
  };
}
