// The rate control's quick estimates (src-main/engine/codec/wavelet-estimate.ts) and the five-crop aim of a PSNR
// floor (src-main/engine/lowrank/floor-aim.ts spreadRatio) are computed faster than their plain definitions but
// must give the same numbers bit for bit, since the quantiser step, hence the file, follows from them.
import { beforeAll, describe, expect, it } from 'vitest';
import { DEAD_ZONE_RHO } from '../../src-main/engine/codec/band-steps';
import {
  type AnalysedPlane,
  analysePlane,
  estimateSquaredError,
} from '../../src-main/engine/codec/wavelet-plane';
import { initEngine } from '../../src-main/engine/linalg';
import { spreadRatio } from '../../src-main/engine/lowrank/floor-aim';
import { runHere, type SideRunner } from '../../src-main/engine/lowrank/side-jobs';
import { rampPlane } from './plane-samples';

beforeAll(async () => {
  await initEngine();
});

/**
 * The estimate as defined: every 7th coefficient in index order (the plane has fewer than 2²² coefficients),
 * grouped by band through the band map, each band's magnitudes sorted; each sample's bin ⌊|c|/Δ + ρ⌋
 * worked out on its own, zeros adding |c|², the |q| = 1 and |q| ≥ 2 classes their spread about the class mean
 * (Σr² − (Σr)²/n); bands weighted by their synthesis gains, the sum scaled by the stride.
 */
function definedSquaredError(a: AnalysedPlane, step: number): number {
  const lists: number[][] = a.bands.map(() => []);
  for (let i = 0; i < a.coeffs.length; i += 7) lists[a.map[i]].push(Math.abs(a.coeffs[i]));
  let e = 0;
  a.bands.forEach((b, k) => {
    const v = Float64Array.from(lists[k]).sort();
    const d = step / Math.sqrt(b.gain); // Δ_b = step / √gain_b (../band-steps)
    const rho = b.orient === 0 ? 0.5 : DEAD_ZONE_RHO;
    let band = 0;
    const sums = [0, 0];
    const squares = [0, 0];
    const counts = [0, 0];
    for (const x of v) {
      const m = Math.floor(x / d + rho);
      if (m === 0) band += x * x;
      else {
        const c = m === 1 ? 0 : 1;
        sums[c] += x - m * d;
        squares[c] += (x - m * d) ** 2;
        counts[c]++;
      }
    }
    for (const c of [0, 1]) if (counts[c]) band += squares[c] - (sums[c] * sums[c]) / counts[c];
    e += b.gain * band;
  });
  return e * 7;
}

describe('the sampled squared-error estimate', () => {
  it('equals its definition bit for bit from very fine to very coarse steps, asked once or again', () => {
    const [w, h] = [301, 257];
    const a = analysePlane(rampPlane(w, h, 5), w, h);
    const steps = Array.from({ length: 60 }, (_, i) => 0.002 * 1.25 ** i); // 0.002 … ~1000
    const want = steps.map((s) => definedSquaredError(a, s));
    // Twice: the second pass is answered from the remembered values.
    for (let pass = 0; pass < 2; pass++) expect(steps.map((s) => estimateSquaredError(a, s))).toEqual(want);
    // The estimate spans zero-only and all-non-zero bands: it must grow from ~0 to about the plane's energy.
    expect(want[0]).toBeLessThan(want[want.length - 1] * 1e-6);
  });
});

describe('the five crops of a PSNR floor', () => {
  it('give the same ratio whichever order their jobs are computed in', () => {
    const [w, h] = [1100, 900];
    const plane = rampPlane(w, h, 11);
    // Each job deferred until it is joined: spreadRatio joins from the last crop down, so the crops are
    // analysed in the reverse order, each in the memory the one before released.
    const deferred: SideRunner = (name, args) => () => runHere(name, args)();
    for (const step of [2, 9]) {
      const inOrder = spreadRatio([plane], w, h, [1], 255, step, 512, runHere);
      expect(spreadRatio([plane], w, h, [1], 255, step, 512, deferred)).toBe(inOrder);
      // A ratio of decoded to transform-domain error, within the bounds the aim trusts.
      expect(inOrder).toBeGreaterThanOrEqual(0.9);
      expect(inOrder).toBeLessThanOrEqual(1.3);
    }
  });
});
