/**
 * The compare view: two canvases that share one transform (zoom and pan stay in step, down to 1:1
 * device pixels), a swipe divider, a difference view with gain, one rank-one layer σᵢuᵢvᵢᵀ, and the
 * per-tile rank map. Only the visible pixels are painted, so a repaint costs the viewport, not the scan.
 */

import type { ViewMode, ViewSource } from './view-types';

export type { ViewMode, ViewSource };

const BG = [38, 41, 46];

/** Rank-map colour ramp (our own: deep ink blue → verdigris → straw), t in 0..1. */
function ramp(t: number): [number, number, number] {
  const stops = [
    [28, 42, 74],
    [47, 125, 109],
    [232, 200, 110],
  ];
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
  /** Device pixels per image pixel. */
  scale = 1;
  cx = 0;
  cy = 0;
  private fitted = false;
  source?: ViewSource;
  onChange?: () => void;
  lastPaintMs = 0;

  constructor(
    readonly left: HTMLCanvasElement,
    readonly right: HTMLCanvasElement,
    readonly host: HTMLElement,
  ) {
    for (const c of [left, right]) this.bindPointer(c);
    new ResizeObserver(() => this.paint()).observe(host);
  }

  setSource(src: ViewSource) {
    const sameSize = this.source && this.source.width === src.width && this.source.height === src.height;
    this.source = src;
    if (!sameSize) this.fitted = false;
    this.paint();
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
    const s = this.source;
    if (!s) return;
    const { w, h } = this.sizeCanvases();
    this.scale = Math.min(w / s.width, h / s.height);
    this.cx = s.width / 2;
    this.cy = s.height / 2;
    this.fitted = true;
    this.paint();
  }

  /** Zoom by a factor around a canvas point (device px); 1:1 when `to` is given. */
  zoom(factor: number, at?: { x: number; y: number }, to?: number) {
    const c = this.right;
    const p = at ?? { x: c.width / 2, y: c.height / 2 };
    const ix = this.cx + (p.x - c.width / 2) / this.scale;
    const iy = this.cy + (p.y - c.height / 2) / this.scale;
    const next = Math.max(0.01, Math.min(32, to ?? this.scale * factor));
    this.cx = ix - (p.x - c.width / 2) / next;
    this.cy = iy - (p.y - c.height / 2) / next;
    this.scale = next;
    this.paint();
  }

  private bindPointer(c: HTMLCanvasElement) {
    let drag: { x: number; y: number; cx: number; cy: number; divider: boolean } | undefined;
    c.addEventListener('pointerdown', (e) => {
      const dpr = window.devicePixelRatio || 1;
      const x = e.offsetX * dpr;
      const divider = this.mode === 'swipe' && Math.abs(x - this.swipe * c.width) < 14 * dpr;
      drag = { x: e.clientX, y: e.clientY, cx: this.cx, cy: this.cy, divider };
      c.setPointerCapture(e.pointerId);
    });
    c.addEventListener('pointermove', (e) => {
      if (!drag) return;
      const dpr = window.devicePixelRatio || 1;
      if (drag.divider) {
        this.swipe = Math.max(0, Math.min(1, (e.offsetX * dpr) / c.width));
      } else {
        this.cx = drag.cx - ((e.clientX - drag.x) * dpr) / this.scale;
        this.cy = drag.cy - ((e.clientY - drag.y) * dpr) / this.scale;
      }
      this.paint();
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
    if (!s) {
      for (const c of [this.left, this.right]) c.getContext('2d')?.clearRect(0, 0, c.width, c.height);
      return;
    }
    if (!this.fitted) {
      this.scale = Math.min(w / s.width, h / s.height);
      this.cx = s.width / 2;
      this.cy = s.height / 2;
      this.fitted = true;
    }
    // Column and row lookup tables for this transform (−1 = outside the scan).
    const ix = new Int32Array(w);
    const iy = new Int32Array(h);
    const x0 = this.cx - w / 2 / this.scale;
    const y0 = this.cy - h / 2 / this.scale;
    for (let x = 0; x < w; x++) {
      const v = Math.floor(x0 + (x + 0.5) / this.scale);
      ix[x] = v >= 0 && v < s.width ? v : -1;
    }
    for (let y = 0; y < h; y++) {
      const v = Math.floor(y0 + (y + 0.5) / this.scale);
      iy[y] = v >= 0 && v < s.height ? v : -1;
    }
    const k = 255 / s.peak;
    const rec = s.recon();
    if (this.mode === 'side') {
      this.blit(this.left, ix, iy, s.original, k, 0);
      this.blit(this.right, ix, iy, rec, k, 0);
    } else if (this.mode === 'swipe') {
      const split = Math.round(this.swipe * w);
      this.blit(this.right, ix, iy, s.original, k, 0, rec, split);
      const ctx = this.right.getContext('2d')!;
      ctx.fillStyle = '#e07a3f';
      ctx.fillRect(split - 1, 0, 3, h);
      ctx.beginPath();
      ctx.arc(split, h / 2, 9 * (window.devicePixelRatio || 1), 0, Math.PI * 2);
      ctx.fill();
    } else if (this.mode === 'diff') {
      this.blitDiff(this.right, ix, iy, rec, s.original, k * this.gain);
    } else if (this.mode === 'layer' && s.layer) {
      this.blitLayer(this.right, ix, iy, s.layer(this.layerIndex));
    } else if (this.mode === 'tiles') {
      this.blitTiles(this.right, ix, iy, rec, k);
    } else this.blit(this.right, ix, iy, rec, k, 0);
    this.lastPaintMs = performance.now() - t0;
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
    this.blit(c, ix, iy, rec, k, 0);
    if (!t) return;
    const ctx = c.getContext('2d')!;
    const maxRank = Math.max(1, ...t.ranks);
    ctx.save();
    ctx.globalAlpha = 0.55;
    const x0 = this.cx - c.width / 2 / this.scale;
    const y0 = this.cy - c.height / 2 / this.scale;
    const size = t.tile * this.scale;
    for (let ty = 0; ty < t.rows; ty++)
      for (let tx = 0; tx < t.cols; tx++) {
        const rank = t.ranks[ty * t.cols + tx];
        const [r, g, b] = ramp(rank / maxRank);
        ctx.fillStyle = `rgb(${r},${g},${b})`;
        const sx = (tx * t.tile - x0) * this.scale;
        const sy = (ty * t.tile - y0) * this.scale;
        const tw = Math.min(t.tile, s.width - tx * t.tile) * this.scale;
        const th = Math.min(t.tile, s.height - ty * t.tile) * this.scale;
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
