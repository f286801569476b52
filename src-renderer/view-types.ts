/** What the compare view (./viewer.ts) shows; no DOM, so the page's pure modules can name it. */

export type ViewMode = 'side' | 'swipe' | 'diff' | 'layer' | 'tiles';

export interface ViewSource {
  width: number;
  height: number;
  /** 255 or 65535. */
  peak: number;
  original: (Uint8Array | Uint16Array)[];
  /** Set when there is no original to show (a stack file keeps none): why, shown in its place. */
  noOriginal?: string;
  /** Reconstruction planes on the source scale. */
  recon: () => Float32Array[];
  /** One rank-one layer: σ, u (height), v (width) per plane. */
  layer?: (i: number) => { s: number; u: Float32Array; v: Float32Array }[];
  /** Per-tile ranks (tiled mode). */
  tiles?: { tile: number; cols: number; rows: number; ranks: number[] };
}
