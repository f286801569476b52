/**
 * What the compare view paints for an open scan (the original and, on the right, the model at the
 * slider's rank, the tiled preview, the cleaned scan or the removed part) and the labels above the panes.
 */
import { bind } from './bind';
import { frameLabels, mapLegend, paneLabels } from './captions';
import { removedForDisplay } from './figures';
import type { PageState } from './state';
import type { CompareView, ViewSource } from './viewer';

export interface Panes {
  /** Paint the open scan's model (after a new model, preview or cleaning result). */
  showModel(): void;
  /** Rewrite the pane labels from the state, the view and the slider. */
  label(): void;
  /** Drop the cached removed-part planes (after a new cleaning result). */
  forgetRemoved(): void;
}

export function createPanes(state: PageState, view: CompareView): Panes {
  const el = bind(document, {
    labels: '.pane-labels',
    left: '#label-left',
    right: '#label-right',
    rank: 'input#rank',
    gain: '#gain-control',
    layer: '#layer-control',
    legend: '#map-legend',
  });
  const part = (sel: string) => el.legend.querySelector<HTMLElement>(sel);

  /** The removed part as shown, rebuilt when the gain changes. */
  let removedView: { gain: number; planes: Float32Array[] } | undefined;
  const removedPlanes = (removed: Float32Array[], peak: number) => {
    if (!removedView || removedView.gain !== view.gain)
      removedView = { gain: view.gain, planes: removedForDisplay(removed, peak, view.gain) };
    return removedView.planes;
  };

  const modelSource = (): ViewSource | undefined => {
    const m = state.model;
    if (!m) return undefined;
    const tiles = state.preview?.tiles?.[0];
    return {
      width: m.width,
      height: m.height,
      peak: m.displayPeak,
      original: m.planes.map((p) => p.src),
      recon: () => {
        if (state.showing === 'cleaned' && state.cleaned) return state.cleaned.cleaned;
        if (state.showing === 'removed' && state.cleaned)
          return removedPlanes(state.cleaned.removed, m.displayPeak);
        if (state.preview && (state.tiled || state.preview.residual)) return state.preview.planes;
        return m.planes.map((p) => p.acc);
      },
      layer: (i) => {
        const k = Math.min(m.maxRank - 1, Math.max(0, i));
        return m.planes.map((p) => ({
          s: p.sigma[k],
          u: p.u.subarray(k * m.height, (k + 1) * m.height),
          v: p.v.subarray(k * m.width, (k + 1) * m.width),
        }));
      },
      tiles: tiles ? { tile: tiles.tile, cols: tiles.cols, rows: tiles.rows, ranks: tiles.ranks } : undefined,
    };
  };

  const write = (labels: { left: string; right: string }) => {
    el.left.textContent = labels.left;
    el.right.textContent = labels.right;
  };

  return {
    showModel() {
      const source = modelSource();
      if (!source) throw new Error('No scan is open to show.');
      view.setSource(source);
    },
    label() {
      // Nothing open yet: no pane labels at all (the drop hint says what to do), never "original" over
      // an empty pane or a rank of a scan that is not there.
      const nothing = !state.model && !state.stack.info;
      el.labels.hidden = nothing;
      if (nothing) return write({ left: '', right: '' });
      // A stack frame has no layers or tiles here, and a difference only against an original shown.
      const frame = state.stack.info && !state.model;
      const diff = view.mode === 'diff' && !(frame && view.source?.noOriginal);
      // Controls only in the views they change.
      el.gain.hidden = !(diff || state.showing === 'removed');
      el.layer.hidden = frame || view.mode !== 'layer';
      const ranks = state.tiled ? state.preview?.tiles?.[0]?.ranks : undefined;
      const legend = mapLegend({
        mode: frame && !diff ? 'side' : view.mode,
        showing: state.showing,
        gain: view.gain,
        tileRanks: ranks?.length ? { min: 0, max: Math.max(1, ...ranks) } : undefined,
      });
      el.legend.hidden = !legend;
      if (legend) {
        part('.map-bar')?.style.setProperty('background', legend.gradient);
        for (const k of ['low', 'mid', 'high'] as const) {
          const e = part(`.map-${k}`);
          if (e) e.textContent = legend[k];
        }
      }
      // A stack frame keeps its own labels (./stack.ts).
      if (frame && state.stack.info) return write(frameLabels(state.stack.info));
      write(
        paneLabels({
          showing: state.showing,
          mode: view.mode,
          gain: view.gain,
          layerIndex: view.layerIndex,
          tiled: state.tiled,
          tile: state.tile,
          residual: !state.tiled && state.preview?.residual === true,
          rank: Number(el.rank.value),
          held: state.model?.maxRank ?? Number.POSITIVE_INFINITY,
        }),
      );
    },
    forgetRemoved() {
      removedView = undefined;
    },
  };
}
