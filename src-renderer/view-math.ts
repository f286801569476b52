/**
 * The compare view's transform, with no DOM: one state (scale, centre, divider) for every view mode,
 * fitted to the canvas, and clamped so that a pan or zoom never leaves a pane half empty while the image
 * could fill it.
 */

export interface ViewState {
  /** Device pixels per image pixel. */
  scale: number;
  /** Image point at the canvas centre. */
  cx: number;
  cy: number;
  /** Whether the view follows the canvas (refit on resize and mode change) until the user zooms or pans. */
  fitted: boolean;
}

const MIN_SCALE = 0.01;
const MAX_SCALE = 32;

/** The whole image in a canvas of w×h device pixels, centred. */
export function fitView(w: number, h: number, imgW: number, imgH: number): ViewState {
  return { scale: Math.min(w / imgW, h / imgH), cx: imgW / 2, cy: imgH / 2, fitted: true };
}

/**
 * Keep the image over the canvas: along each axis, an image wider than the canvas may not be pulled in
 * past its edge, and an image narrower than the canvas is centred.
 */
export function clampView(v: ViewState, w: number, h: number, imgW: number, imgH: number): ViewState {
  const axis = (c: number, view: number, size: number) => {
    const half = view / 2 / v.scale;
    if (2 * half >= size) return size / 2;
    return Math.min(size - half, Math.max(half, c));
  };
  return { ...v, cx: axis(v.cx, w, imgW), cy: axis(v.cy, h, imgH) };
}

/**
 * Zoom by `factor` (or to `to` device pixels per image pixel) keeping the image point under canvas point
 * (px, py) in place, then clamp.
 */
export function zoomView(
  v: ViewState,
  w: number,
  h: number,
  imgW: number,
  imgH: number,
  factor: number,
  at: { x: number; y: number } = { x: w / 2, y: h / 2 },
  to?: number,
): ViewState {
  const ix = v.cx + (at.x - w / 2) / v.scale;
  const iy = v.cy + (at.y - h / 2) / v.scale;
  const scale = Math.max(MIN_SCALE, Math.min(MAX_SCALE, to ?? v.scale * factor));
  const next = { scale, cx: ix - (at.x - w / 2) / scale, cy: iy - (at.y - h / 2) / scale, fitted: false };
  return clampView(next, w, h, imgW, imgH);
}

/** Pan by (dx, dy) device pixels of the canvas, then clamp. */
export function panView(
  v: ViewState,
  w: number,
  h: number,
  imgW: number,
  imgH: number,
  dx: number,
  dy: number,
) {
  return clampView(
    { ...v, cx: v.cx - dx / v.scale, cy: v.cy - dy / v.scale, fitted: false },
    w,
    h,
    imgW,
    imgH,
  );
}

/** What a key does to the view: zoom (+, −, 0 to fit) or pan (arrows, by a tenth of the canvas). */
export type ViewKey = { zoom: number } | { fit: true } | { pan: [number, number] };

export function viewKey(key: string): ViewKey | undefined {
  switch (key) {
    case '+':
    case '=':
      return { zoom: 1.5 };
    case '-':
    case '−':
    case '_':
      return { zoom: 1 / 1.5 };
    case '0':
      return { fit: true };
    case 'ArrowLeft':
      return { pan: [1, 0] };
    case 'ArrowRight':
      return { pan: [-1, 0] };
    case 'ArrowUp':
      return { pan: [0, 1] };
    case 'ArrowDown':
      return { pan: [0, -1] };
    default:
      return undefined;
  }
}

/** Half the width, in CSS px, of the swipe divider's grab area (a 32 px band). */
export const DIVIDER_GRAB_PX = 16;

/** Where a key moves the divider (a share of the pane, 0..1), or undefined for other keys. */
export function dividerKey(key: string, at: number): number | undefined {
  const step: Record<string, number> = { ArrowLeft: -0.05, ArrowRight: 0.05, PageDown: -0.25, PageUp: 0.25 };
  if (key === 'Home') return 0;
  if (key === 'End') return 1;
  if (!(key in step)) return undefined;
  return Math.max(0, Math.min(1, Math.round((at + step[key]) * 100) / 100));
}
