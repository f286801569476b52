/** A pane of the compare view with nothing to show: cleared, with the reason in the middle, wrapped. */
export function paneNote(c: HTMLCanvasElement, text: string): void {
  const ctx = c.getContext('2d');
  if (!ctx) return;
  const dpr = window.devicePixelRatio || 1;
  const size = Math.round(13 * dpr);
  ctx.clearRect(0, 0, c.width, c.height);
  ctx.fillStyle = '#e8e0d0';
  ctx.textAlign = 'center';
  ctx.font = `${size}px system-ui, sans-serif`;
  // Whole words per line within the pane (less a margin), never squeezed into one line.
  const room = Math.max(size, c.width - 24 * dpr);
  const lines: string[] = [];
  for (const word of text.split(/\s+/)) {
    const last = lines.length ? `${lines[lines.length - 1]} ${word}` : word;
    if (lines.length && ctx.measureText(last).width <= room) lines[lines.length - 1] = last;
    else lines.push(word);
  }
  const step = Math.round(size * 1.4);
  const top = c.height / 2 - ((lines.length - 1) * step) / 2;
  lines.forEach((line, i) => {
    ctx.fillText(line, c.width / 2, top + i * step, room);
  });
}
