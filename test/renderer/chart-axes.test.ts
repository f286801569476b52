// Chart axes: compact tick labels with SI prefixes k and M (common practice), room for the widest label and
// the title, tick spacing that follows the plot size.
import { describe, expect, it } from 'vitest';
import { AXIS, axisRoom, compactTick, tickSpace } from '../../src-renderer/chart-axes';

describe('chart axes', () => {
  it('tick labels in few characters', () => {
    expect(compactTick(100_000)).toBe('100k');
    expect(compactTick(2_500_000)).toBe('2.5M');
    expect(compactTick(1000)).toBe('1000');
    expect(compactTick(0.01)).toBe('0.01');
    expect(compactTick(37.123)).toBe('37.1');
    expect(compactTick(null)).toBe('');
  });

  it('a y axis is as wide as its widest label plus ticks and title; an x axis as tall as a line', () => {
    const width = (s: string) => 7 * s.length;
    const fixed = AXIS.tick + AXIS.gap + AXIS.pad + AXIS.labelGap + AXIS.labelSize;
    expect(axisRoom(['10', '100k', ''], width, true)).toBe(fixed + 28);
    expect(axisRoom(['10', '100k'], width, false)).toBe(fixed + 12);
  });

  it('ticks sparser on small plots, never closer than the font allows', () => {
    expect(tickSpace(100, true)).toBe(28);
    expect(tickSpace(400, true)).toBe(80);
    expect(tickSpace(200, false)).toBe(48);
  });
});
