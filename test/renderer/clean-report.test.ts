// The Clean panel's table: the service's report fields (src-main/contract/clean.ts) as named quantities
// with units; the figures below are made up, the texts written out by hand.
import { describe, expect, it } from 'vitest';
import { cleanReportRows, noiseFitSeries } from '../../src-renderer/clean-report';

describe('cleanReportRows', () => {
  it('names each quantity and gives its unit, no raw keys', () => {
    const rows = cleanReportRows({
      input: 'camera.png',
      width: 10,
      height: 10,
      channels: 1,
      method: 'groups',
      noiseSigma: 0.670_163_28,
      noiseSource: 'estimated',
      threshold: 12.34,
      removedRms: 0.5,
      changedSamples: 25,
      psnrChange: 54.578_712,
    });
    expect(rows.map((r) => [r.name, r.value])).toEqual([
      ['Noise level', '0.67 grey levels (estimated)'],
      ['Noise threshold', '12.3 grey levels'],
      ['Method', 'groups of similar patches'],
      ['Removed, RMS', '0.50 grey levels'],
      ['Cleaned vs original', '54.58 dB PSNR'],
      ['Samples changed', '25 of 100 (25.0 %)'],
    ]);
    for (const r of rows) expect(r.help.length).toBeGreaterThan(10);
    expect(JSON.stringify(rows)).not.toMatch(/noiseSigma|psnrChange|changedSamples/);
  });

  it('an unchanged scan and skipped noise removal say so', () => {
    const rows = cleanReportRows({ noiseSkipped: 'scan too small', noiseSigma: null, psnrChange: null });
    expect(rows.map((r) => r.value)).toEqual(['skipped: scan too small', 'identical']);
  });
});

describe('the noise model in the Clean panel', () => {
  const report = {
    noiseModel: {
      model: 'poisson-gaussian',
      source: 'fitted',
      a: 0.45,
      b: 4,
      planes: [
        {
          plane: 'gray',
          a: 0.45,
          b: 4,
          points: [
            { level: 100, sigma: 7.2, count: 500, used: true },
            { level: 20, sigma: 3.6, count: 500, used: false },
          ],
        },
      ],
    },
  };
  it('a row gives the model in words with a and b', () => {
    expect(cleanReportRows(report).find((r) => r.name === 'Noise model')?.value).toBe(
      'σ² = 0.450·x + 4.00 (fitted); grows with brightness',
    );
  });
  it('the note on an extrapolated b gets its own row, and no row without it', () => {
    expect(cleanReportRows(report).some((r) => r.name === 'Noise in black (b)')).toBe(false);
    const bNote =
      'b is extrapolated from levels ≥ 100: no flat part of the scan is darker, so b is known only to ± 7.05';
    const rows = cleanReportRows({ noiseModel: { ...report.noiseModel, bNote } });
    expect(rows.find((r) => r.name === 'Noise in black (b)')?.value).toBe(bNote);
  });
  it('the plot series are sorted by level; the model is √(a·x + b) (by hand: √49 = 7, √13 = 3.6056)', () => {
    const s = noiseFitSeries(report);
    expect(s?.levels).toEqual([20, 100]);
    expect(s?.measured).toEqual([3.6, 7.2]);
    expect(s?.dropped).toEqual([3.6, null]);
    expect(s?.fitted[1]).toBe(7);
    expect(s?.fitted[0]).toBeCloseTo(3.605551, 6);
  });
  it('no fitted model, no plot', () => {
    expect(noiseFitSeries({ noiseModel: null })).toBeNull();
  });
});
