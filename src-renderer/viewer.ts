/**
 * The compare view: two canvases that share one transform (zoom and pan stay in step, down to 1:1
 * device pixels), a swipe divider, a difference view with gain, one rank-one layer σᵢuᵢvᵢᵀ, and the
 * per-tile rank map. Only the visible pixels are painted, so a repaint costs the viewport, not the scan.
 */

import { paneNote } from './canvas-note';
import { NO_TILES, RANK_RAMP } from './captions';
import { drawDivider, SwipeHandle } from './swipe-handle';
import { clampView, DIVIDER_GRAB_PX, fitView, panView, type ViewState, viewKey, zoomView } from './view-math';
import type { ViewMode, ViewSource } from './view-types';

export type { ViewMode, ViewSource };

const BG = [38, 41, 46];

/** Rank-map colour ramp (../captions.ts RANK_RAMP), t in 0..1. */
function ramp(t: number): [number, number, number] {
  const stops = RANK_RAMP;
  const x = Math.max(0, Math.min(1, t)) * (stops.length - 1);
  const i = Math.min(stops.length - 2, Math.floor(x));
  const f = x - i;
  return [0, 1, 2].map((c) => Math.round(stops[i][c] + f * (stops[i + 1][c] - stops[i][c]))) as [
    number,
    number,
    number,
  ];
}

export class CompareView {
  mode: ViewMode = 'side';
  gain = 8;
  layerIndex = 0;
  swipe = 0.5;
  /** One transform for every mode: zoom, pan and whether it follows the canvas (./view-math.ts). */
  v: ViewState = { scale: 1, cx: 0, cy: 0, fitted: true };
  source?: ViewSource;
  onChange?: () => void;
  lastPaintMs = 0;
  private readonly handle: SwipeHandle;

  constructor(
    readonly left: HTMLCanvasElement,
    readonly right: HTMLCanvasElement,
    readonly host: HTMLElement,
  ) {
    for (const c of [left, right]) this.bindPointer(c);
    this.handle = new SwipeHandle(host, right, (share) => {
      this.swipe = share;
      this.paint();
    });
    new ResizeObserver(() => this.paint()).observe(host);
    // Keys anywhere on the page except where they type or choose (fields, lists, sliders).
    document.addEventListener('keydown', (e) => {
      if (!(e.target instanceof Element) || !e.target.closest('input, select, textarea, [contenteditable]'))
        this.key(e);
    });
  }

  get scale() {
    return this.v.scale;
  }

  setSource(src: ViewSource) {
    const sameSize = this.source && this.source.width === src.width && this.source.height === src.height;
    this.source = src;
    if (!sameSize) this.v = { ...this.v, fitted: true };
    this.paint();
  }

  /** Change the view mode, keeping zoom, pan and divider (refitted if the view follows the canvas). */
  setMode(mode: ViewMode) {
    this.mode = mode;
    this.paint();
  }

  /** The transform through a view-math step, for the right canvas's size and the open image. */
  private apply(step: (w: number, h: number, iw: number, ih: number) => ViewState) {
    const s = this.source;
    if (!s) return;
    const { w, h } = this.sizeCanvases();
    this.v = step(w, h, s.width, s.height);
    this.paint();
  }

  /** Keyboard: + and − zoom, 0 fits, arrows pan by a tenth of the pane. */
  private key(e: KeyboardEvent) {
    const k = viewKey(e.key);
    if (!k || !this.source || e.ctrlKey || e.metaKey || e.altKey) return;
    e.preventDefault();
    if ('fit' in k) return this.fit();
    if ('zoom' in k) return this.zoom(k.zoom);
    this.apply((w, h, iw, ih) => panView(this.v, w, h, iw, ih, (k.pan[0] * w) / 10, (k.pan[1] * h) / 10));
  }

  private sizeCanvases() {
    const dpr = window.devicePixelRatio || 1;
    const r = this.host.getBoundingClientRect();
    const side = this.mode === 'side';
    this.left.style.display = side ? 'block' : 'none';
    const w = Math.max(1, Math.floor((side ? (r.width - 6) / 2 : r.width) * dpr));
    const h = Math.max(1, Math.floor(r.height * dpr));
    for (const c of side ? [this.left, this.right] : [this.right]) {
      if (c.width !== w || c.height !== h) {
        c.width = w;
        c.height = h;
      }
      c.style.width = `${w / dpr}px`;
      c.style.height = `${h / dpr}px`;
    }
    return { w, h };
  }

  fit() {
    this.apply((w, h, iw, ih) => fitView(w, h, iw, ih));
  }

  /** Zoom by a factor around a canvas point (device px); to `to` device px per image px when given. */
  zoom(factor: number, at?: { x: number; y: number }, to?: number) {
    this.apply((w, h, iw, ih) => zoomView(this.v, w, h, iw, ih, factor, at, to));
  }

  private bindPointer(c: HTMLCanvasElement) {
    let drag: { x: number; y: number; from: ViewState; divider: boolean } | undefined;
    c.addEventListener('pointerdown', (e) => {
      const dpr = window.devicePixelRatio || 1;
      const x = e.offsetX * dpr;
      const divider = this.mode === 'swipe' && Math.abs(x - this.swipe * c.width) <= DIVIDER_GRAB_PX * dpr;
      drag = { x: e.clientX, y: e.clientY, from: this.v, divider };
      c.setPointerCapture(e.pointerId);
    });
    c.addEventListener('pointermove', (e) => {
      const dpr = window.devicePixelRatio || 1;
      if (!drag) {
        const near =
          this.mode === 'swipe' && Math.abs(e.offsetX * dpr - this.swipe * c.width) <= DIVIDER_GRAB_PX * dpr;
        c.style.cursor = near ? 'ew-resize' : '';
        return;
      }
      if (drag.divider) {
        this.swipe = Math.max(0, Math.min(1, (e.offsetX * dpr) / c.width));
        this.paint();
      } else {
        const from = drag.from;
        const dx = (e.clientX - drag.x) * dpr;
        const dy = (e.clientY - drag.y) * dpr;
        this.apply((w, h, iw, ih) => panView(from, w, h, iw, ih, dx, dy));
      }
    });
    c.addEventListener('pointerup', () => {
      drag = undefined;
    });
    c.addEventListener(
      'wheel',
      (e) => {
        e.preventDefault();
        const dpr = window.devicePixelRatio || 1;
        this.zoom(e.deltaY < 0 ? 1.25 : 0.8, { x: e.offsetX * dpr, y: e.offsetY * dpr });
      },
      { passive: false },
    );
  }

  /** Repaint the visible pixels of both canvases. */
  paint() {
    const s = this.source;
    const t0 = performance.now();
    const { w, h } = this.sizeCanvases();
    this.handle.place(s && this.mode === 'swipe' && !s.noOriginal ? this.swipe : undefined);
    if (!s) {
      for (const c of [this.left, this.right]) c.getContext('2d')?.clearRect(0, 0, c.width, c.height);
      return this.describe(w, h);
    }
    // Follow the canvas (resize, mode change) until the user zooms or pans; keep the image over it after.
    this.v = this.v.fitted ? fitView(w, h, s.width, s.height) : clampView(this.v, w, h, s.width, s.height);
    const { scale, cx, cy } = this.v;
    // Column and row lookup tables for this transform (−1 = outside the scan).
    const ix = new Int32Array(w);
    const iy = new Int32Array(h);
    const x0 = cx - w / 2 / scale;
    const y0 = cy - h / 2 / scale;
    for (let x = 0; x < w; x++) {
      const v = Math.floor(x0 + (x + 0.5) / scale);
      ix[x] = v >= 0 && v < s.width ? v : -1;
    }
    for (let y = 0; y < h; y++) {
      const v = Math.floor(y0 + (y + 0.5) / scale);
      iy[y] = v >= 0 && v < s.height ? v : -1;
    }
    const k = 255 / s.peak;
    const rec = s.recon();
    if (this.mode === 'side') {
      if (s.noOriginal) paneNote(this.left, s.noOriginal);
      else this.blit(this.left, ix, iy, s.original, k, 0);
      this.blit(this.right, ix, iy, rec, k, 0);
    } else if (s.noOriginal && (this.mode === 'swipe' || this.mode === 'diff')) {
      this.blit(this.right, ix, iy, rec, k, 0);
    } else if (this.mode === 'swipe') {
      const split = Math.round(this.swipe * w);
      this.blit(this.right, ix, iy, s.original, k, 0, rec, split);
      drawDivider(this.right.getContext('2d')!, split, h, window.devicePixelRatio || 1);
    } else if (this.mode === 'diff') {
      this.blitDiff(this.right, ix, iy, rec, s.original, k * this.gain);
    } else if (this.mode === 'layer' && s.layer) {
      this.blitLayer(this.right, ix, iy, s.layer(this.layerIndex));
    } else if (this.mode === 'tiles') {
      this.blitTiles(this.right, ix, iy, rec, k);
    } else this.blit(this.right, ix, iy, rec, k, 0);
    this.lastPaintMs = performance.now() - t0;
    this.describe(w, h);
  }

  /** The view state on the stage as data attributes, for tests and tools (device px per image px). */
  private describe(w: number, h: number) {
    const d = this.host.dataset;
    d.mode = this.mode;
    d.scale = String(this.v.scale);
    d.cx = String(this.v.cx);
    d.cy = String(this.v.cy);
    d.fitted = String(this.v.fitted);
    d.swipe = String(this.swipe);
    d.canvas = `${w}x${h}`;
  }

  private image(c: HTMLCanvasElement): { ctx: CanvasRenderingContext2D; img: ImageData; px: Uint32Array } {
    const ctx = c.getContext('2d')!;
    const img = ctx.createImageData(c.width, c.height);
    return { ctx, img, px: new Uint32Array(img.data.buffer) };
  }

  private static rgba(r: number, g: number, b: number) {
    return (255 << 24) | (b << 16) | (g << 8) | r;
  }

  /** Paint planes (or `alt` right of `split`) scaled by k to 8 bits. */
  private blit(
    c: HTMLCanvasElement,
    ix: Int32Array,
    iy: Int32Array,
    planes: ArrayLike<number>[],
    k: number,
    _offset: number,
    alt?: ArrayLike<number>[],
    split = Number.POSITIVE_INFINITY,
  ) {
    const { ctx, img, px } = this.image(c);
    const w = c.width;
    const s = this.source!;
    const bg = CompareView.rgba(BG[0], BG[1], BG[2]);
    const rgb = planes.length >= 3;
    for (let y = 0; y < iy.length; y++) {
      const r = iy[y];
      const o = y * w;
      if (r < 0) {
        px.fill(bg, o, o + w);
        continue;
      }
      const ro = r * s.width;
      for (let x = 0; x < w; x++) {
        const col = ix[x];
        if (col < 0) {
          px[o + x] = bg;
          continue;
        }
        const src = x >= split && alt ? alt : planes;
        const i = ro + col;
        let a = src[0][i] * k;
        a = a < 0 ? 0 : Math.min(a, 255);
        if (rgb) {
          let g = src[1][i] * k;
          let b = src[2][i] * k;
          g = g < 0 ? 0 : Math.min(g, 255);
          b = b < 0 ? 0 : Math.min(b, 255);
          px[o + x] = (255 << 24) | ((b + 0.5) << 16) | ((g + 0.5) << 8) | (a + 0.5);
        } else {
          const v = (a + 0.5) | 0;
          px[o + x] = (255 << 24) | (v << 16) | (v << 8) | v;
        }
      }
    }
    ctx.putImageData(img, 0, 0);
  }

  private blitDiff(
    c: HTMLCanvasElement,
    ix: Int32Array,
    iy: Int32Array,
    rec: Float32Array[],
    orig: ArrayLike<number>[],
    k: number,
  ) {
    const { ctx, img, px } = this.image(c);
    const w = c.width;
    const s = this.source!;
    const bg = CompareView.rgba(BG[0], BG[1], BG[2]);
    const nPlanes = Math.min(3, rec.length);
    for (let y = 0; y < iy.length; y++) {
      const r = iy[y];
      const o = y * w;
      for (let x = 0; x < w; x++) {
        const col = ix[x];
        if (r < 0 || col < 0) {
          px[o + x] = bg;
          continue;
        }
        const i = r * s.width + col;
        // Signed error, averaged over colour planes: warm = reconstruction too bright, cool = too dark.
        let d = 0;
        for (let p = 0; p < nPlanes; p++) d += rec[p][i] - orig[p][i];
        d = (d / nPlanes) * k;
        const m = Math.min(255, Math.abs(d));
        const base = 128;
        const v = d >= 0 ? [base + m / 2, base, base - m / 2] : [base - m / 2, base, base + m / 2];
        px[o + x] = CompareView.rgba(v[0] | 0, v[1] | 0, v[2] | 0);
      }
    }
    ctx.putImageData(img, 0, 0);
  }

  private blitLayer(
    c: HTMLCanvasElement,
    ix: Int32Array,
    iy: Int32Array,
    layers: { s: number; u: Float32Array; v: Float32Array }[],
  ) {
    const { ctx, img, px } = this.image(c);
    const w = c.width;
    const bg = CompareView.rgba(BG[0], BG[1], BG[2]);
    const L = layers[0];
    let mu = 0;
    let mv = 0;
    for (const x of L.u) mu = Math.max(mu, Math.abs(x));
    for (const x of L.v) mv = Math.max(mv, Math.abs(x));
    const norm = mu * mv > 0 ? 127 / (mu * mv) : 0;
    for (let y = 0; y < iy.length; y++) {
      const r = iy[y];
      const o = y * w;
      for (let x = 0; x < w; x++) {
        const col = ix[x];
        if (r < 0 || col < 0) {
          px[o + x] = bg;
          continue;
        }
        const t = L.u[r] * L.v[col] * norm; // −127..127, sign of the layer's contribution
        const m = Math.abs(t);
        px[o + x] =
          t >= 0
            ? CompareView.rgba(128 + m, 128 + m * 0.55, 128 - m * 0.4)
            : CompareView.rgba(128 - m * 0.6, 128 - m * 0.1, 128 + m);
      }
    }
    ctx.putImageData(img, 0, 0);
  }

  private blitTiles(c: HTMLCanvasElement, ix: Int32Array, iy: Int32Array, rec: Float32Array[], k: number) {
    const s = this.source!;
    const t = s.tiles;
    if (!t) return paneNote(c, NO_TILES);
    this.blit(c, ix, iy, rec, k, 0);
    const ctx = c.getContext('2d')!;
    const maxRank = Math.max(1, ...t.ranks);
    ctx.save();
    ctx.globalAlpha = 0.55;
    const { scale, cx, cy } = this.v;
    const x0 = cx - c.width / 2 / scale;
    const y0 = cy - c.height / 2 / scale;
    const size = t.tile * scale;
    for (let ty = 0; ty < t.rows; ty++)
      for (let tx = 0; tx < t.cols; tx++) {
        const rank = t.ranks[ty * t.cols + tx];
        const [r, g, b] = ramp(rank / maxRank);
        ctx.fillStyle = `rgb(${r},${g},${b})`;
        const sx = (tx * t.tile - x0) * scale;
        const sy = (ty * t.tile - y0) * scale;
        const tw = Math.min(t.tile, s.width - tx * t.tile) * scale;
        const th = Math.min(t.tile, s.height - ty * t.tile) * scale;
        ctx.fillRect(sx, sy, tw, th);
        if (size > 26) {
          ctx.globalAlpha = 1;
          ctx.fillStyle = '#fffaf0';
          ctx.font = `${Math.min(18, size / 3)}px sans-serif`;
          ctx.fillText(String(rank), sx + 3, sy + Math.min(18, size / 3) + 2);
          ctx.globalAlpha = 0.55;
        }
      }
    ctx.restore();
  }
}
