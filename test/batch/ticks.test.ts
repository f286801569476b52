/**
 * The report's histogram ticks (src-main/node/batch/ticks.ts; issue #14 saw "20.12 20.12" and a clipped
 * label): 1-2-5 steps, distinct labels, all inside the range, and no more than asked.
 */
import { describe, expect, it } from 'vitest';
import { histogramSvg } from '../../src-main/node/batch/report';
import { niceTicks } from '../../src-main/node/batch/ticks';

describe('niceTicks', () => {
  it.each([
    [20.118, 20.124],
    [20.1, 47.3],
    [0.5, 1.5],
    [1.31, 1.3100001],
    [0, 2_000_000],
    [35.02, 35.98],
  ])('over [%f, %f]: distinct labels, inside the range, 1-2-5 steps', (lo, hi) => {
    const t = niceTicks(lo, hi);
    expect(t.length).toBeGreaterThanOrEqual(1);
    expect(t.length).toBeLessThanOrEqual(6);
    expect(new Set(t.map((x) => x.label)).size).toBe(t.length);
    for (const x of t) {
      expect(x.value).toBeGreaterThanOrEqual(lo - 1e-9 * Math.abs(lo));
      expect(x.value).toBeLessThanOrEqual(hi + 1e-9 * Math.abs(hi));
    }
    if (t.length > 1) {
      const step = t[1].value - t[0].value;
      const mantissa = step / 10 ** Math.floor(Math.log10(step) + 1e-9);
      expect([1, 2, 5, 10].some((m) => Math.abs(mantissa - m) < 1e-6)).toBe(true);
    }
  });

  it('gives the examples their expected ticks', () => {
    expect(niceTicks(20.1, 47.3).map((x) => x.label)).toEqual(['25', '30', '35', '40', '45']);
    expect(niceTicks(0, 1).map((x) => x.label)).toEqual(['0.0', '0.2', '0.4', '0.6', '0.8', '1.0']);
  });

  it('draws a narrow PSNR histogram without repeated tick labels', () => {
    const svg = histogramSvg([20.12, 20.121, 20.123], 'PSNR', 'dB');
    const labels = [...svg.matchAll(/text-anchor="(?:start|middle|end)">([^<]+)</g)].map((m) => m[1]);
    expect(new Set(labels).size).toBe(labels.length);
  });
});
