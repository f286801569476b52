// The noise variance of a patch group's average under correlated noise (engine/clean/noise-psd-cross.ts).
// References: the exact quadratic form (at offset 0 the cross-covariance is noise-psd-spectrum.ts's per-coefficient
// variance), the two limits of the average (n copies of one patch: n times the variance; patches far apart: the
// variance itself), and a Monte Carlo estimate on filtered white noise.
import { describe, expect, it } from 'vitest';
import { PSD_LAG } from '../../src-main/engine/clean/noise-psd';
import {
  groupAverageVariances,
  patchCrossCovariance,
  WIENER_AVERAGE,
} from '../../src-main/engine/clean/noise-psd-cross';
import { dctNoiseVariances } from '../../src-main/engine/clean/noise-psd-spectrum';
import { dctMatrix } from '../../src-main/engine/clean/wiener-groups';
import { analyticPsd, BINOMIAL_3, filteredNoise, GAUSSIAN_5 } from './correlated-noise';

const P = 6;
const M = P * P;

describe('cross-covariance of patch DCT coefficients', () => {
  for (const [name, g] of [
    ['3×3 binomial', BINOMIAL_3],
    ['5×5 Gaussian σ_k = 1', GAUSSIAN_5],
  ] as Array<[string, number[]]>)
    it(`${name}: offset 0 gives the per-coefficient variances; copies add up, distant patches do not`, () => {
      const psd = analyticPsd(g, PSD_LAG);
      const cov = patchCrossCovariance(psd, P);
      const d = dctNoiseVariances(psd, P);
      const w = 2 * cov.reach + 1;
      const centre = (cov.reach * w + cov.reach) * M;
      for (let q = 0; q < M; q++) expect(cov.table[centre + q]).toBeCloseTo(d[q], 12);
      const out = new Float64Array(M);
      const four = Int32Array.from([10, 10, 10, 10]);
      groupAverageVariances(cov, d, 4, four, four, out);
      for (let q = 0; q < M; q++) expect(out[q]).toBeCloseTo(4 * d[q], 12);
      // Beyond the reach (lag + p − 1) patches share no noise: the average keeps one patch's variance.
      const far = Int32Array.from([0, 40, 80, 120]);
      groupAverageVariances(cov, d, 4, far, Int32Array.from([0, 0, 0, 0]), out);
      for (let q = 0; q < M; q++) expect(out[q]).toBeCloseTo(d[q], 12);
    });

  it('binomial noise, a group of 8 patches a few pixels apart: matches a Monte Carlo estimate within 8 %', () => {
    const side = 1100;
    const field = filteredNoise(side, side, BINOMIAL_3, 1, 41);
    const dy = [0, 0, 1, 2, 0, 3, -2, 1];
    const dx = [0, 1, 0, 2, -3, 1, 2, -1];
    const C = dctMatrix(P);
    const qs = [0, 1, 6, 7, 14];
    const sums = qs.map(() => 0);
    let samples = 0;
    for (let y0 = 8; y0 + 20 < side; y0 += 20)
      for (let x0 = 8; x0 + 20 < side; x0 += 20) {
        samples++;
        qs.forEach((q, i) => {
          const u = Math.floor(q / P);
          const v = q % P;
          let s = 0;
          for (let k = 0; k < dy.length; k++)
            for (let a = 0; a < P; a++)
              for (let b = 0; b < P; b++)
                s += C[u * P + a] * C[v * P + b] * field[(y0 + dy[k] + a) * side + x0 + dx[k] + b];
          sums[i] += (s * s) / dy.length;
        });
      }
    const psd = analyticPsd(BINOMIAL_3, PSD_LAG);
    const d = dctNoiseVariances(psd, P);
    const predicted = groupAverageVariances(
      patchCrossCovariance(psd, P),
      d,
      dy.length,
      Int32Array.from(dy),
      Int32Array.from(dx),
      new Float64Array(M),
    );
    qs.forEach((q, i) => {
      const measured = sums[i] / samples;
      expect(Math.abs(measured / predicted[q] - 1)).toBeLessThan(0.08);
    });
    // The group average of the lowest coefficient carries several times one patch's variance (the old assumption).
    expect(predicted[0]).toBeGreaterThan(4 * d[0]);
  });

  it("the Wiener pass's bounded form: the low band's table equals the full one; its average is capped; the rest keeps d", () => {
    const psd = analyticPsd(GAUSSIAN_5, PSD_LAG);
    const full = patchCrossCovariance(psd, P);
    const low = patchCrossCovariance(psd, P, WIENER_AVERAGE);
    const b = WIENER_AVERAGE.band;
    expect(low.band).toBe(b);
    const w = 2 * low.reach + 1;
    for (let o = 0; o < w * w; o++)
      for (let u = 0; u < b; u++)
        for (let v = 0; v < b; v++)
          expect(low.table[o * b * b + u * b + v]).toBe(full.table[o * M + u * P + v]);
    const d = dctNoiseVariances(psd, P);
    // Eight patches a pixel or two apart: the exact average is several times d at the lowest frequencies.
    const ys = Int32Array.from([0, 0, 1, 1, 2, 0, 2, 1]);
    const xs = Int32Array.from([0, 1, 0, 1, 0, 2, 1, 2]);
    const exact = groupAverageVariances(full, d, 8, ys, xs, new Float64Array(M));
    const bounded = groupAverageVariances(low, d, 8, ys, xs, new Float64Array(M));
    expect(exact[0]).toBeGreaterThan(4 * d[0]);
    for (let q = 0; q < M; q++) {
      const inBand = Math.floor(q / P) < b && q % P < b;
      expect(bounded[q]).toBeCloseTo(inBand ? Math.min(WIENER_AVERAGE.cap * d[q], exact[q]) : d[q], 12);
    }
    expect(bounded[0]).toBeCloseTo(WIENER_AVERAGE.cap * d[0], 12);
  });
});
