// RGB ⇄ YCbCr against the JFIF 1.02 values quoted in test/fixtures/reference/notes.md.
import { describe, expect, it } from 'vitest';
import { RGB_TO_YCBCR, rgbToYcbcr, YCBCR_TO_RGB, ycbcrToRgb } from '../../src-main/engine/colour';

describe('YCbCr (JFIF 1.02, BT.601 full range)', () => {
  it('uses the JFIF 1.02 coefficients', () => {
    // JFIF 1.02 "Conversion to and from RGB": Y = 0.299R+0.587G+0.114B; Cb = −0.1687R−0.3313G+0.5B+128;
    // Cr = 0.5R−0.4187G−0.0813B+128 (4-digit rounding in the spec; exact rows from K_R = 0.299, K_B = 0.114).
    const spec = [
      [0.299, 0.587, 0.114],
      [-0.1687, -0.3313, 0.5],
      [0.5, -0.4187, -0.0813],
    ];
    for (const [i, row] of RGB_TO_YCBCR.entries())
      for (const [j, v] of row.entries()) expect(Math.abs(v - spec[i][j])).toBeLessThan(6e-5);
    // Exact values from notes.md: Cb row −0.168736, −0.331264, 0.5; Cr row 0.5, −0.418688, −0.081312.
    expect(RGB_TO_YCBCR[1]).toEqual([-0.168736, -0.331264, 0.5]);
    expect(RGB_TO_YCBCR[2]).toEqual([0.5, -0.418688, -0.081312]);
    // Inverse (JFIF 1.02): R = Y+1.402(Cr−128), G = Y−0.34414(Cb−128)−0.71414(Cr−128), B = Y+1.772(Cb−128).
    expect(YCBCR_TO_RGB[0][2]).toBe(1.402);
    expect(Math.abs(YCBCR_TO_RGB[1][1] + 0.34414)).toBeLessThan(1e-5);
    expect(Math.abs(YCBCR_TO_RGB[1][2] + 0.71414)).toBeLessThan(1e-5);
    expect(YCBCR_TO_RGB[2][1]).toBe(1.772);
  });

  it('maps primaries and greys to the JFIF values and back', () => {
    const [y, cb, cr] = rgbToYcbcr([255, 0, 0, 128], [0, 255, 0, 128], [0, 0, 255, 128], 8);
    // Pure red: Y = 0.299·255 = 76.245, Cb = 128 − 0.168736·255, Cr = 128 + 0.5·255 (JFIF formulas).
    expect(y[0]).toBeCloseTo(76.245, 9);
    expect(cb[0]).toBeCloseTo(128 - 0.168736 * 255, 9);
    expect(cr[0]).toBeCloseTo(255.5, 9);
    // Grey stays on the neutral axis: Cb = Cr = 128.
    expect(cb[3]).toBeCloseTo(128, 9);
    expect(cr[3]).toBeCloseTo(128, 9);
    const [r, g, b] = ycbcrToRgb(y, cb, cr, 8);
    const want = [
      [255, 0, 0, 128],
      [0, 255, 0, 128],
      [0, 0, 255, 128],
    ];
    for (const [c, p] of [r, g, b].entries())
      for (const [i, v] of p.entries()) expect(Math.abs(v - want[c][i])).toBeLessThan(0.02);
  });

  it('uses the half-range offset 32768 at 16 bits', () => {
    const [, cb, cr] = rgbToYcbcr([30000], [30000], [30000], 16);
    expect(cb[0]).toBeCloseTo(32768, 6);
    expect(cr[0]).toBeCloseTo(32768, 6);
  });
});
