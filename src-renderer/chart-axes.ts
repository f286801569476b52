/**
 * How the page's charts lay out their axes, with no DOM: compact tick labels, the room an axis needs for
 * its widest tick label and its title (so titles never sit on the labels), and tick spacing that follows
 * the plot's size.
 */

/** A tick label in few characters: 100k, 2.5M, 0.01 (SI prefixes k and M; common practice). */
export function compactTick(v: number | null): string {
  if (v === null || !Number.isFinite(v)) return '';
  const a = Math.abs(v);
  if (a >= 1e6) return `${trim(v / 1e6)}M`;
  if (a >= 1e4) return `${trim(v / 1e3)}k`;
  return trim(v);
}

const trim = (v: number) => String(Number(v.toPrecision(3)));

/** Pixel sizes of an axis: tick marks, the gap to their labels, and the title's line. */
export const AXIS = { tick: 4, gap: 4, labelGap: 2, labelSize: 16, pad: 6 } as const;

/**
 * Room for a y axis (its width) or an x axis (its height) in CSS px: tick marks, the widest tick label
 * (`textWidth` of each label, or the font's line height for an x axis) and the title.
 */
export function axisRoom(
  labels: readonly string[],
  textWidth: (s: string) => number,
  vertical: boolean,
): number {
  let widest = 0;
  for (const s of labels) widest = Math.max(widest, textWidth(s));
  const text = vertical ? widest : 12;
  return Math.ceil(AXIS.tick + AXIS.gap + text + AXIS.pad + AXIS.labelGap + AXIS.labelSize);
}

/** Minimum CSS px between ticks: sparser on small plots, so labels never crowd (≥ 4 ticks on ≥ 160 px). */
export function tickSpace(plotPx: number, vertical: boolean): number {
  const base = vertical ? 28 : 48;
  return Math.max(base, Math.round(plotPx / (vertical ? 5 : 7)));
}
