// The compare view's transform: fit, clamp, zoom about a point, pan and keys (plain geometry, no outside
// reference needed beyond the definitions in src-renderer/view-math.ts).
import { describe, expect, it } from 'vitest';
import { clampView, fitView, panView, viewKey, zoomView } from '../../src-renderer/view-math';

describe('view transform', () => {
  it('fit shows the whole image, centred', () => {
    expect(fitView(800, 400, 512, 512)).toEqual({ scale: 400 / 512, cx: 256, cy: 256, fitted: true });
  });

  it('a pan cannot pull a larger image in past its edge, and a smaller one stays centred', () => {
    const v = { scale: 2, cx: 256, cy: 256, fitted: false };
    // Canvas 400×400 device px at 2× shows 200×200 image px: the centre may go from 100 to 412.
    expect(panView(v, 400, 400, 512, 512, 10_000, -10_000)).toMatchObject({ cx: 100, cy: 412 });
    // At 0.5× the 512 px image is 256 device px wide in an 800 px canvas: centred whatever the pan.
    expect(clampView({ scale: 0.5, cx: 0, cy: 0, fitted: false }, 800, 800, 512, 512)).toMatchObject({
      cx: 256,
      cy: 256,
    });
  });

  it('zoom keeps the image point under the pointer, and 1:1 after a pan still shows the image', () => {
    const v = fitView(400, 400, 512, 512);
    const z = zoomView(v, 400, 400, 512, 512, 2, { x: 300, y: 200 });
    const before = v.cx + (300 - 200) / v.scale;
    const after = z.cx + (300 - 200) / z.scale;
    expect(after).toBeCloseTo(before, 9);
    const panned = panView(z, 400, 400, 512, 512, 5000, 5000);
    const one = zoomView(panned, 400, 400, 512, 512, 1, undefined, 1);
    expect(one.scale).toBe(1);
    expect(one.cx).toBeGreaterThanOrEqual(200);
    expect(one.cx).toBeLessThanOrEqual(312);
    expect(one.fitted).toBe(false);
  });

  it('keys: + and − zoom, 0 fits, arrows pan, others do nothing', () => {
    expect(viewKey('+')).toEqual({ zoom: 1.5 });
    expect(viewKey('-')).toEqual({ zoom: 1 / 1.5 });
    expect(viewKey('0')).toEqual({ fit: true });
    expect(viewKey('ArrowLeft')).toEqual({ pan: [1, 0] });
    expect(viewKey('ArrowDown')).toEqual({ pan: [0, -1] });
    expect(viewKey('a')).toBeUndefined();
  });
});
