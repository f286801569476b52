// The report's note on b (engine/clean/noise-model.ts extrapolationNote): b is the noise variance at x = 0 of
// σ²(x) = a·x + b (Foi, Trimeche, Katkovnik & Egiazarian, IEEE TIP 17(10), 2008, Sec. II); when the flat level
// sets start above a tenth of the range, or where a·x already exceeds b, b is extrapolated and the report must
// say from where.
import { describe, expect, it } from 'vitest';
import type { NoiseModelPlane } from '../../src-main/contract';
import { extrapolationNote, planNoiseModel } from '../../src-main/engine/clean/noise-model';
import { type Gray, poissonGaussian } from './helpers';

/** A smooth ramp lo…hi (left to right) with a slow vertical wave: flat everywhere, levels lo…hi only. */
function ramp(lo: number, hi: number, width = 512, height = 512): Gray {
  const data = new Float32Array(width * height);
  for (let y = 0; y < height; y++)
    for (let x = 0; x < width; x++)
      data[y * width + x] = lo + ((hi - lo) * x) / width + 5 * Math.sin((2 * Math.PI * y) / height);
  return { width, height, data };
}

const plane = (name: string, a: number, b: number, seB: number, levels: number[]): NoiseModelPlane => ({
  plane: name,
  a,
  b,
  seA: 0.01,
  seB,
  points: levels.map((level, k) => ({ level, sigma: 1, count: 400, used: k > 0 })),
});

describe('the note on an extrapolated b', () => {
  it('names the lowest used level and the standard error of b (unused points do not count)', () => {
    // Used levels 100 and 180 (the point at 10 is unused): x₀ = 100 > 25.5.
    expect(extrapolationNote([plane('gray', 0.45, 4, 7.05, [10, 100, 180])], 255)).toBe(
      'b is extrapolated from levels ≥ 100: no flat part of the scan is darker, so b is known only to ± 7.05',
    );
  });

  it('is absent when the level sets reach below a tenth of the range and a·x₀ ≤ b, or a is 0', () => {
    // x₀ = 20 < 25.5 and a·x₀ = 4 < 9, also on a 16-bit scale (a scales with 257, b with 257²): b is measured there.
    expect(extrapolationNote([plane('gray', 0.2, 9, 0.5, [0, 20, 200])], 255)).toBeNull();
    expect(
      extrapolationNote([plane('gray', 0.2 * 257, 9 * 257 ** 2, 0.5, [0, 20 * 257, 200 * 257])], 65535),
    ).toBeNull();
    expect(extrapolationNote([plane('gray', 0.2, 9, 0.5, [0, 26, 200])], 255)).not.toBeNull();
    // x₀ = 20 but a·x₀ = 20 > b = 9: the variance there is more than twice b.
    expect(extrapolationNote([plane('gray', 1, 9, 1.1, [0, 20, 200])], 255)).toContain('levels ≥ 20:');
    expect(extrapolationNote([plane('gray', 0, 9, 0.5, [0, 150, 200])], 255)).toBeNull();
  });

  it('names the colour planes that are extrapolated, and only those', () => {
    const note = extrapolationNote(
      [
        plane('R', 0.45, 4, 3.2, [0, 120, 200]),
        plane('G', 0.2, 9, 0.4, [0, 20, 200]),
        plane('B', 0.45, 4, 5.5, [0, 90, 200]),
      ],
      255,
    );
    expect(note).toBe(
      'b is extrapolated from levels ≥ 120 (R), 90 (B): no flat part of the scan is darker, so b is known only to ± 3.20 (R), 5.50 (B)',
    );
  });

  it('a scan whose flat parts are all bright (150…230) gets the note; one reaching x ≈ 20 does not', () => {
    const bright = ramp(150, 230);
    const far = planNoiseModel(
      [poissonGaussian(bright, 0.45, 4, 11)],
      ['gray'],
      bright.width,
      bright.height,
      255,
      { noise: 'auto' },
    ).report;
    const from = Math.min(...(far?.planes[0].points ?? []).filter((p) => p.used).map((p) => p.level));
    expect(from).toBeGreaterThan(140);
    expect(far?.bNote).toBe(extrapolationNote(far?.planes ?? [], 255));
    expect(far?.bNote).toContain(`levels ≥ ${from.toFixed(0)}:`);
    const dark = ramp(20, 220);
    const near = planNoiseModel([poissonGaussian(dark, 0.2, 9, 12)], ['gray'], dark.width, dark.height, 255, {
      noise: 'auto',
    }).report;
    expect(near?.model).toBe('poisson-gaussian');
    expect(near?.bNote).toBeUndefined();
  });

  it('a model given with --noise A,B carries no note', () => {
    const img = ramp(150, 230, 64, 64);
    const given = planNoiseModel([img.data], ['gray'], 64, 64, 255, {
      noise: 'auto',
      noiseLevel: { a: 0.45, b: 4 },
    }).report;
    expect(given?.bNote).toBeUndefined();
  });
});
