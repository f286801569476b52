/**
 * The swipe view's divider: drawn on the canvas as a line with a knob, and grabbed through a 32 px wide
 * slider element laid over it, so it can be dragged anywhere along its height and moved from the keyboard
 * (arrows by 5 %, Page Up and Page Down by 25 %, Home and End to the edges).
 */
import { DIVIDER_GRAB_PX, dividerKey } from './view-math';

/** Draw the divider at device x: a 4 px line and a 28 px knob with arrows, visible on light and dark scans. */
export function drawDivider(ctx: CanvasRenderingContext2D, x: number, h: number, dpr: number) {
  ctx.save();
  ctx.fillStyle = '#fffaf0';
  ctx.fillRect(x - 3 * dpr, 0, 6 * dpr, h);
  ctx.fillStyle = '#e07a3f';
  ctx.fillRect(x - 2 * dpr, 0, 4 * dpr, h);
  ctx.beginPath();
  ctx.arc(x, h / 2, 14 * dpr, 0, Math.PI * 2);
  ctx.fill();
  ctx.strokeStyle = '#fffaf0';
  ctx.lineWidth = 2 * dpr;
  ctx.stroke();
  ctx.fillStyle = '#fffaf0';
  for (const d of [-1, 1]) {
    ctx.beginPath();
    ctx.moveTo(x + d * 9 * dpr, h / 2);
    ctx.lineTo(x + d * 3 * dpr, h / 2 - 5 * dpr);
    ctx.lineTo(x + d * 3 * dpr, h / 2 + 5 * dpr);
    ctx.fill();
  }
  ctx.restore();
}

export class SwipeHandle {
  readonly el: HTMLDivElement;

  /** `canvas` is the pane the divider splits; `move` sets the divider (share of its width) and repaints. */
  constructor(
    host: HTMLElement,
    private readonly canvas: HTMLCanvasElement,
    private readonly move: (share: number) => void,
  ) {
    const el = document.createElement('div');
    el.id = 'swipe-handle';
    el.className = 'swipe-handle';
    el.tabIndex = 0;
    el.hidden = true;
    el.setAttribute('role', 'slider');
    el.setAttribute('aria-label', 'Swipe divider');
    el.setAttribute('aria-valuemin', '0');
    el.setAttribute('aria-valuemax', '100');
    el.title = 'Drag, or use the arrow keys, to move the divider: original on the left, model on the right';
    el.style.width = `${2 * DIVIDER_GRAB_PX}px`;
    host.append(el);
    this.el = el;
    el.addEventListener('keydown', (e) => {
      const to = dividerKey(e.key, this.share);
      if (to === undefined) return;
      // The keys move the divider only, never pan the view (../viewer.ts listens on the document).
      e.preventDefault();
      e.stopPropagation();
      this.move(to);
    });
    let dragging = false;
    el.addEventListener('pointerdown', (e) => {
      dragging = true;
      el.setPointerCapture(e.pointerId);
      el.focus();
    });
    el.addEventListener('pointermove', (e) => {
      if (!dragging) return;
      const r = this.canvas.getBoundingClientRect();
      this.move(Math.max(0, Math.min(1, (e.clientX - r.left) / Math.max(1, r.width))));
    });
    const stop = () => {
      dragging = false;
    };
    el.addEventListener('pointerup', stop);
    el.addEventListener('pointercancel', stop);
  }

  private share = 0.5;

  /** Show the handle over the divider at `share` of the pane's width, or hide it (`share` undefined). */
  place(share: number | undefined) {
    this.el.hidden = share === undefined;
    if (share === undefined) return;
    this.share = share;
    const x = this.canvas.offsetLeft + share * this.canvas.clientWidth;
    this.el.style.left = `${x - DIVIDER_GRAB_PX}px`;
    const pct = Math.round(share * 100);
    this.el.setAttribute('aria-valuenow', String(pct));
    this.el.setAttribute('aria-valuetext', `${pct} % original, ${100 - pct} % model`);
  }
}
