/**
 * The tool drawer's tabs: Clean, Save and Batch.
 */
import { bind } from './bind';

export type Tab = 'clean' | 'save' | 'batch';
const TABS: readonly Tab[] = ['clean', 'save', 'batch'];

/** Wire the tabs; returns the function that selects one. */
export function setupTabs(): (name: Tab) => void {
  const tabs = TABS.map((t) => ({
    name: t,
    ...bind(document, { tab: `button#tab-${t}`, panel: `section#panel-${t}` }),
  }));
  const select = (name: Tab) => {
    for (const t of tabs) {
      t.tab.setAttribute('aria-selected', String(t.name === name));
      t.panel.hidden = t.name !== name;
    }
  };
  for (const t of tabs) t.tab.addEventListener('click', () => select(t.name));
  return select;
}
