/**
 * The swipe divider's keys (issue 14: "a wide, visible divider handle", keyboard-operable). The steps follow
 * WAI-ARIA Authoring Practices 1.2, "Slider pattern", keyboard interaction (arrows one step, Page Up/Down
 * a larger step, Home/End to the minimum and maximum); the step sizes (5 %, 25 %) are this app's choice.
 */
import { describe, expect, it } from 'vitest';
import { dividerKey } from '../../src-renderer/view-math';

describe('dividerKey', () => {
  it('moves by 5 % with the arrows and 25 % with Page Up/Down, within 0..1', () => {
    expect(dividerKey('ArrowRight', 0.5)).toBe(0.55);
    expect(dividerKey('ArrowLeft', 0.5)).toBe(0.45);
    expect(dividerKey('PageUp', 0.5)).toBe(0.75);
    expect(dividerKey('PageDown', 0.5)).toBe(0.25);
    expect(dividerKey('ArrowRight', 0.98)).toBe(1);
    expect(dividerKey('PageDown', 0.1)).toBe(0);
  });

  it('Home and End go to the edges; other keys leave the divider alone', () => {
    expect(dividerKey('Home', 0.4)).toBe(0);
    expect(dividerKey('End', 0.4)).toBe(1);
    expect(dividerKey('ArrowUp', 0.4)).toBeUndefined();
    expect(dividerKey('a', 0.4)).toBeUndefined();
  });

  it('repeated steps land on whole percentages (no drift from adding 0.05)', () => {
    let at = 0;
    for (let i = 0; i < 20; i++) at = dividerKey('ArrowRight', at) as number;
    expect(at).toBe(1);
    for (let i = 0; i < 7; i++) at = dividerKey('ArrowLeft', at) as number;
    expect(at).toBe(0.65);
  });
});
