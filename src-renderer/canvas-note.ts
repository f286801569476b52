/** A pane of the compare view with nothing to show: cleared, with the reason in the middle. */
export function paneNote(c: HTMLCanvasElement, text: string): void {
  const ctx = c.getContext('2d');
  if (!ctx) return;
  ctx.clearRect(0, 0, c.width, c.height);
  ctx.fillStyle = '#e8e0d0';
  ctx.textAlign = 'center';
  ctx.font = `${Math.round(13 * (window.devicePixelRatio || 1))}px system-ui, sans-serif`;
  ctx.fillText(text, c.width / 2, c.height / 2, c.width - 16);
}
