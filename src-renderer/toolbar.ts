/**
 * The compare toolbar: view mode, zoom, the difference gain and the layer of the one-layer view.
 */
import { bind, find } from './bind';
import type { Panes } from './panes';
import type { CompareView, ViewMode } from './viewer';

/** Zoom commands, by the ids of their toolbar buttons (also the desktop menu's command names). */
export const ZOOM: Record<'zoom-fit' | 'zoom-1' | 'zoom-in' | 'zoom-out', (view: CompareView) => void> = {
  'zoom-fit': (view) => view.fit(),
  'zoom-1': (view) => view.zoom(1, undefined, 1),
  'zoom-in': (view) => view.zoom(1.5),
  'zoom-out': (view) => view.zoom(1 / 1.5),
};

export const isZoom = (command: string): command is keyof typeof ZOOM => Object.hasOwn(ZOOM, command);

export interface Toolbar {
  /** A new model's layer count, the largest layer the one-layer view can show. */
  setLayerCount(n: number): void;
}

export function setupToolbar(view: CompareView, panes: Panes): Toolbar {
  const el = bind(document, { gain: 'input#gain', layer: 'input#layer' });
  const modes = [...document.querySelectorAll<HTMLButtonElement>('[data-mode]')];
  for (const b of modes)
    b.addEventListener('click', () => {
      for (const o of modes) o.setAttribute('aria-pressed', String(o === b));
      view.setMode(b.dataset.mode as ViewMode);
      panes.label();
    });
  for (const [id, zoom] of Object.entries(ZOOM))
    find(document, `button#${id}`).addEventListener('click', () => zoom(view));
  el.gain.addEventListener('input', () => {
    view.gain = Number(el.gain.value);
    panes.label();
    view.paint();
  });
  el.layer.addEventListener('input', () => {
    view.layerIndex = Math.max(0, Number(el.layer.value) - 1);
    panes.label();
    view.paint();
  });
  return {
    setLayerCount(n) {
      el.layer.max = String(n);
    },
  };
}
