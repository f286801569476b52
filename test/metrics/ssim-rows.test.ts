import { describe, expect, it } from 'vitest';
import { ssim, ssimFromRowSums, ssimRowSums } from '../../src-main/engine/metrics';
import { decodeImage } from '../../src-main/node/image/decode';
import { image } from '../helpers/fixtures';

/** A plane and a noisy copy of it (seeded LCG noise, ±8 grey levels). */
function pair(src: Float32Array, seed: number): Float32Array {
  let s = seed >>> 0;
  return src.map((v) => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return Math.min(255, Math.max(0, v + ((s >>> 24) % 17) - 8));
  });
}

describe('SSIM row sums (the split a second thread computes)', () => {
  it('split at any row, the sums added in row order give ssim() bit for bit (camera.png, 512²)', async () => {
    const d = await decodeImage(image('camera.png'));
    const { width, height } = d;
    const a = d.planes[0];
    const b = pair(a, 7);
    const whole = ssim(a, b, width, height, 255);
    const hv = height - 10;
    for (const mid of [1, 37, hv >> 1, hv - 1]) {
      const top = ssimRowSums(a, b, width, height, 255, 0, mid);
      // The lower part from its own rows only, as a worker receives them (rows mid … height − 1).
      const sub = (p: Float32Array) => p.slice(mid * width, height * width);
      const bottom = ssimRowSums(sub(a), sub(b), width, height, 255, mid, hv);
      expect(top.length + bottom.length).toBe(hv);
      expect(ssimFromRowSums([...top, ...bottom], width, height)).toBe(whole);
    }
    // A property, not only self-consistency: a worse copy scores lower, and identical planes score 1.
    expect(
      ssim(
        a,
        pair(a, 9).map((v, i) => (v + b[i]) / 2),
        width,
        height,
        255,
      ),
    ).not.toBe(whole);
    expect(ssimFromRowSums(ssimRowSums(a, a, width, height, 255, 0, hv), width, height)).toBe(1);
  });

  it('refuses an empty or out-of-range split', () => {
    const a = new Float32Array(20 * 20);
    expect(() => ssimRowSums(a, a, 20, 20, 255, 5, 5)).toThrow(RangeError);
    expect(() => ssimRowSums(a, a, 20, 20, 255, 0, 11)).toThrow(RangeError);
  });
});
