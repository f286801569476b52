/**
 * Statistics of a banding profile: its dominant period, mean removal, RMS, and the energy two profiles share.
 *
 * References
 * - Spectrum of the profile by a direct DFT; the peak is refined on a 1/64-bin grid of the DTFT and a final
 *   parabola (zero-padding interpolation; common practice in spectral peak estimation).
 */

/** Dominant period of a profile from its DFT power spectrum (bins 2 … L/2, i.e. periods L/2 … 2 px). */
export function dominantPeriod(profile: ArrayLike<number>): { period: number | null; share: number } {
  const L = profile.length;
  const K = Math.floor(L / 2);
  if (K < 3) return { period: null, share: 0 };
  const power = new Float64Array(K + 1);
  const cosT = new Float64Array(L);
  const sinT = new Float64Array(L);
  for (let x = 0; x < L; x++) {
    cosT[x] = Math.cos((2 * Math.PI * x) / L);
    sinT[x] = Math.sin((2 * Math.PI * x) / L);
  }
  let total = 0;
  for (let k = 1; k <= K; k++) {
    let re = 0;
    let im = 0;
    for (let x = 0, idx = 0; x < L; x++, idx = (idx + k) % L) {
      re += profile[x] * cosT[idx];
      im -= profile[x] * sinT[idx];
    }
    power[k] = re * re + im * im;
    total += power[k];
  }
  if (!(total > 0)) return { period: null, share: 0 };
  let best = 2;
  for (let k = 2; k <= K; k++) if (power[k] > power[best]) best = k;
  const lo = power[best - 1];
  const hi = best + 1 <= K ? power[best + 1] : 0;
  const share = (lo + power[best] + hi) / total;
  // Refine between bins: evaluate the DTFT on a fine grid within ±1 bin of the peak (equivalent to heavy
  // zero padding), then a parabola through the finest maximum and its neighbours.
  const dtft = (f: number) => {
    let re = 0;
    let im = 0;
    const w = (2 * Math.PI * f) / L;
    for (let x = 0; x < L; x++) {
      re += profile[x] * Math.cos(w * x);
      im -= profile[x] * Math.sin(w * x);
    }
    return re * re + im * im;
  };
  const step = 1 / 64;
  let fBest = best;
  let pBest = power[best];
  for (let f = best - 1 + step; f < best + 1; f += step) {
    const pw = dtft(f);
    if (pw > pBest) {
      pBest = pw;
      fBest = f;
    }
  }
  const pl = dtft(fBest - step);
  const ph = dtft(fBest + step);
  const denom = pl - 2 * pBest + ph;
  const delta = denom !== 0 ? Math.max(-1, Math.min(1, (0.5 * (pl - ph)) / denom)) : 0;
  return { period: L / (fBest + delta * step), share };
}

/** Subtract the mean, in place. */
export function removeMean(a: Float64Array) {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i];
  s /= a.length || 1;
  for (let i = 0; i < a.length; i++) a[i] -= s;
}

/** Root mean square. */
export function rms(a: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * a[i];
  return Math.sqrt(s / (a.length || 1));
}

/** ⟨a, b⟩ / ‖whole‖², clamped to [−1, 1]: the energy two halves' profiles share, relative to the whole's. */
export function sharedEnergy(a: Float64Array, b: Float64Array, whole: Float64Array): number {
  let ab = 0;
  let ww = 0;
  for (let i = 0; i < a.length; i++) {
    ab += a[i] * b[i];
    ww += whole[i] * whole[i];
  }
  return ww > 0 ? Math.max(-1, Math.min(1, ab / ww)) : 0;
}
