// Stack-mode models: frame-mode SVD (Gram route) and truncated Tucker (HOSVD, ST-HOSVD).
import { Matrix as MlMatrix, SVD as MlSVD } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { driftingSpecimen, formPages, lowRankSeries, phantomSlices } from '../../bench/models/synthetic';
import { sequentialHosvd, truncatedHosvd, tuckerFrame } from '../../bench/models/tucker';
import { centredFrames, eigenFrames, frameModeSvd, rebuildFrame } from '../../src-main/engine/stack';

function sse(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return s;
}

/** Rebuild all frames at k eigen-frames with the unquantised V coefficients. */
function rebuildAll(frames: Float32Array[], w: number, h: number, k: number) {
  const f = frameModeSvd(frames, w, h);
  const Y = centredFrames(frames, f.mean, f.offsets);
  const P = eigenFrames(Y, f, k);
  const N = frames.length;
  const out = frames.map((_, j) => {
    const c = new Float64Array(k);
    for (let i = 0; i < k; i++) c[i] = f.V[j * N + i];
    return rebuildFrame(f.mean, f.offsets[j], P, c);
  });
  return { f, out };
}

describe('frame-mode SVD through the Gram matrix', () => {
  it('recovers a rank-3 series exactly at k = 3, and its tail singular values vanish', () => {
    // Property: the centred matrix of μ + Σ_{i<3} a_ij B_i has rank ≤ 3 (definition of rank);
    // tolerance: frames are stored as float32 (relative rounding 6e-8 on values ≈ 128).
    const s = lowRankSeries(3, { width: 24, height: 20, frames: 16 });
    const { f, out } = rebuildAll(s.frames, s.width, s.height, 3);
    for (let j = 0; j < 16; j++)
      expect(Math.sqrt(sse(out[j], s.frames[j]) / out[j].length)).toBeLessThan(1e-4);
    expect(f.sigma[3] / f.sigma[0]).toBeLessThan(1e-6);
  });

  it('full rank returns every frame of a noisy series to rounding', () => {
    const s = driftingSpecimen({ width: 40, height: 32, frames: 16, seed: 2 });
    const { out } = rebuildAll(s.frames, s.width, s.height, 16);
    for (let j = 0; j < 16; j++)
      expect(Math.max(...out[j].map((v, p) => Math.abs(v - s.frames[j][p])))).toBeLessThan(1e-9);
  });

  it('Eckart–Young along the frame mode: ‖Y − Y_k‖_F² = Σ_{i>k} σ_i² for every k (before quantisation)', () => {
    // Eckart & Young, Psychometrika 1(3), 1936 (from memory): the rank-k truncation error in the
    // Frobenius norm is the discarded singular-value energy. Relative tolerance 1e-9.
    const s = formPages({ width: 48, height: 60, frames: 16, seed: 9 });
    const f = frameModeSvd(s.frames, s.width, s.height);
    const Y = centredFrames(s.frames, f.mean, f.offsets);
    for (const k of [0, 1, 2, 4, 8, 12, 15]) {
      const { out } = rebuildAll(s.frames, s.width, s.height, k);
      let err = 0;
      for (let j = 0; j < 16; j++) err += sse(out[j], s.frames[j]);
      let tail = 0;
      for (let i = k; i < 16; i++) tail += f.sigma[i] ** 2;
      expect(Math.abs(err - tail)).toBeLessThanOrEqual(1e-9 * f.energy + 1e-9);
      expect(Y.length).toBe(16);
    }
  });

  it('agrees with ml-matrix 6.15 SVD of the centred frame matrix (independent library)', () => {
    const s = driftingSpecimen({ width: 30, height: 26, frames: 20, seed: 4, noise: 3 });
    const f = frameModeSvd(s.frames, s.width, s.height);
    const Y = centredFrames(s.frames, f.mean, f.offsets);
    const n = s.width * s.height;
    const M = new MlMatrix(n, 20);
    for (let j = 0; j < 20; j++) for (let p = 0; p < n; p++) M.set(p, j, Y[j][p]);
    const ref = new MlSVD(M, { autoTranspose: true }).diagonal;
    // Gram-route accuracy (frame-svd.ts): |σ_i² − σ̂_i²| ≲ N·ε·σ₁², so σ is good to 1e-9 relative while it
    // is large, and to the floor √(N·ε)·σ₁ once it is tiny. The mean removal leaves rank ≤ N − 1 (Σ_j Y_j = 0).
    for (let i = 0; i < 20; i++)
      expect(Math.abs(f.sigma[i] - ref[i])).toBeLessThanOrEqual(Math.max(1e-9 * ref[i], f.sigmaFloor));
    expect(f.sigma[19]).toBeLessThan(1e-6 * f.sigma[0]);
  });

  it('the offsets sum to zero and the eigen-frames are orthogonal with ‖P_i‖ = σ_i', () => {
    const s = phantomSlices({ width: 32, height: 32, frames: 16 });
    const f = frameModeSvd(s.frames, s.width, s.height);
    expect(Math.abs(f.offsets.reduce((a, b) => a + b, 0))).toBeLessThan(1e-9);
    const P = eigenFrames(centredFrames(s.frames, f.mean, f.offsets), f, 4);
    for (let a = 0; a < 4; a++)
      for (let b = 0; b < 4; b++) {
        let d = 0;
        for (let p = 0; p < P[a].length; p++) d += P[a][p] * P[b][p];
        expect(Math.abs(d - (a === b ? f.sigma[a] ** 2 : 0))).toBeLessThan(1e-8 * f.sigma[0] ** 2);
      }
  });
});

describe('truncated Tucker: HOSVD and ST-HOSVD', () => {
  const s = phantomSlices({ width: 28, height: 24, frames: 12, seed: 3, noise: 1 });
  const total = (t: ReturnType<typeof truncatedHosvd>) => {
    let e = 0;
    for (let j = 0; j < 12; j++) e += sse(tuckerFrame(t, j), s.frames[j]);
    return e;
  };

  it('at full multilinear rank both reconstruct the tensor exactly', () => {
    for (const fn of [truncatedHosvd, sequentialHosvd]) {
      const t = fn(s.frames, 24, 28, [24, 28, 12]);
      expect(Math.sqrt(total(t) / (24 * 28 * 12))).toBeLessThan(1e-9);
    }
  });

  it('ST-HOSVD error² equals the sum of the energies discarded at each step', () => {
    // Vannieuwenhoven, Vandebril & Meerbergen, SIAM J. Sci. Comput. 34(2), 2012, Thm 5.1 (number from memory).
    const t = sequentialHosvd(s.frames, 24, 28, [8, 9, 4]);
    const d = t.discarded[0] + t.discarded[1] + t.discarded[2];
    expect(Math.abs(total(t) - d)).toBeLessThan(1e-8 * d);
  });

  it('HOSVD error² is at most the sum of the discarded mode energies', () => {
    // De Lathauwer, De Moor & Vandewalle, SIAM J. Matrix Anal. Appl. 21(4), 2000, Property 10 (from memory).
    const t = truncatedHosvd(s.frames, 24, 28, [8, 9, 4]);
    const d = t.discarded[0] + t.discarded[1] + t.discarded[2];
    const e = total(t);
    expect(e).toBeLessThanOrEqual(d * (1 + 1e-9));
    // …and it is a real approximation, not trivially small or the whole energy.
    expect(e).toBeGreaterThan(0);
  });

  it('the mode-3 spectrum of the HOSVD matches ml-matrix 6.15 SVD of the frame unfolding', () => {
    const t = truncatedHosvd(s.frames, 24, 28, [4, 4, 12]);
    const M = new MlMatrix(12, 24 * 28);
    for (let j = 0; j < 12; j++) for (let p = 0; p < 24 * 28; p++) M.set(j, p, s.frames[j][p]);
    const ref = new MlSVD(M.transpose(), { autoTranspose: true }).diagonal;
    for (let i = 0; i < 12; i++) expect(Math.abs(t.spectra[2][i] - ref[i])).toBeLessThan(1e-9 * ref[0]);
  });
});
