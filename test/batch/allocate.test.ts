/**
 * The byte-total allocator (src-main/node/batch/allocate.ts) on synthetic files whose rate–quality curves are
 * known exactly: PSNR = a + b·ln(bytes). The curves are built from measured-style points on those laws, and
 * piecewise log-linear interpolation reproduces such a law exactly, so the allocations must match the closed
 * forms below to rounding (whole bytes).
 *
 * Closed forms (Lagrange multipliers; Shoham & Gersho 1988, §II, for the equal-slope condition):
 * - equal quality: every file at F, so bytes_i = exp((F − a_i)/b_i) and Σ bytes_i = T. With one b for all,
 *   F = b·ln(T / Σ exp(−a_i/b)).
 * - favour mean: dPSNR_i/dr = b_i/r_i = λ for all i, so r_i = T·b_i / Σ b_j.
 */
import { describe, expect, it } from 'vitest';
import { allocate, minimumTotal } from '../../src-main/node/batch/allocate';
import { rateCurve } from '../../src-main/node/batch/rate-curve';

/** A file with PSNR = a + b·ln r, measured at four sizes from 1 kB to 1 MB. */
const lawCurve = (a: number, b: number) =>
  rateCurve([1e3, 1e4, 1e5, 1e6].map((r) => ({ bytes: r, psnr: a + b * Math.log(r) })));

describe('allocate: equal quality', () => {
  // Four files: a blank-ish leaf (high a), a page, a photograph, a dense map (low a); one slope.
  const b = 3 / Math.LN2; // 3 dB per doubling
  const as = [8, 4, 0, -4];
  const curves = as.map((a) => lawCurve(a, b));
  const total = 600_000;

  it('puts every file at the analytic common floor and fills the total', () => {
    const plan = allocate(curves, total, 'floor');
    expect(plan).toBeDefined();
    const F = b * Math.log(total / as.reduce((s, a) => s + Math.exp(-a / b), 0));
    // Whole bytes (each size rounded up, then the floor lowered to fit) cost under 0.01 dB here.
    expect(Math.abs(plan!.floor - F)).toBeLessThan(0.01);
    for (const [i, a] of as.entries()) {
      expect(plan!.bytes[i]).toBeCloseTo(Math.exp((F - a) / b), -1); // within ±5 bytes (ceil of each)
      expect(plan!.psnr[i]).toBeGreaterThanOrEqual(plan!.floor - 1e-9);
    }
    const used = plan!.bytes.reduce((s, x) => s + x, 0);
    expect(used).toBeLessThanOrEqual(total);
    expect(used).toBeGreaterThan(total - as.length * 2);
  });

  it('holds a file that beats the floor at its smallest size there', () => {
    // A near-blank leaf: 70 dB already at 1 kB.
    const withLeaf = [...curves, lawCurve(70 - b * Math.log(1e3), b)];
    const plan = allocate(withLeaf, total, 'floor')!;
    expect(plan.bytes[4]).toBe(1000);
    expect(plan.psnr[4]).toBeCloseTo(70, 6);
  });
});

describe('allocate: favour mean (equal slopes)', () => {
  const bs = [1, 2, 3, 4];
  const curves = bs.map((b) => lawCurve(10, b));
  const total = 800_000;

  it('gives r_i = T·b_i/Σb', () => {
    const plan = allocate(curves, total, 'mean')!;
    const sb = bs.reduce((s, x) => s + x, 0);
    for (const [i, b] of bs.entries()) expect(plan.bytes[i] / ((total * b) / sb)).toBeCloseTo(1, 4);
    // The equal-slope split beats the equal-quality split on the sum of PSNR.
    const eq = allocate(curves, total, 'floor')!;
    const mean = (p: number[]) => p.reduce((s, x) => s + x, 0);
    expect(mean(plan.psnr)).toBeGreaterThan(mean(eq.psnr));
  });

  it('respects a --min-psnr floor on every file', () => {
    const plan = allocate(curves, total, 'mean', 22)!;
    // Without the guard the b = 1 file gets 80 kB, 10 + ln 80000 = 21.3 dB.
    for (const p of plan.psnr) expect(p).toBeGreaterThanOrEqual(22 - 1e-9);
    expect(plan.bytes[0]).toBe(Math.ceil(Math.exp(12)));
  });
});

describe('allocate: impossible totals', () => {
  const curves = [lawCurve(0, 4), lawCurve(10, 4)];
  it('refuses a total below the sum of the smallest sizes, and names that sum', () => {
    expect(minimumTotal(curves)).toBe(2000);
    expect(allocate(curves, 1999)).toBeUndefined();
    expect(allocate(curves, 2000)?.bytes).toEqual([1000, 1000]);
  });
  it('counts the bytes a --min-psnr floor needs', () => {
    // File 0 reaches 40 dB at exp(40/4) bytes, file 1 at exp(30/4).
    expect(minimumTotal(curves, 40)).toBe(Math.ceil(Math.exp(10)) + Math.ceil(Math.exp(7.5)));
  });
});
