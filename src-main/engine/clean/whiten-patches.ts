/**
 * Whitening of patch groups for correlated noise: each p×p patch goes to its 2-D DCT and every coefficient is
 * divided by the noise's standard deviation there (noise-psd-spectrum.ts `dctNoiseVariances`), so that the
 * noise in the group becomes close to white of the plane's σ; the low-rank threshold (group-low-rank.ts) then
 * applies unchanged, and the inverse map re-colours the estimate. The DCT does not diagonalise correlated noise
 * exactly; the per-coefficient variances are exact, the correlations between coefficients are ignored (as in
 * Mäkinen, Azzari & Foi, IEEE TIP 29, 2020, for the 2-D part of their transform-domain variances).
 *
 * Regularisation: a 3×3 binomial kernel has a zero at the Nyquist frequency, so some coefficients carry almost
 * no noise; dividing by their tiny σ would blow their signal up without purpose. Their relative variance is
 * floored at SPECTRUM_FLOOR (their noise is then over-stated, the safe side for a threshold).
 */

import { type GroupKernels, groupKernels, WHITEN_BASE, WHITEN_SCRATCH_BYTES } from './wasm/runtime';
import { alongPatch, dctMatrix } from './wiener-groups';

/** Smallest relative noise variance used for whitening (chosen here; see the file comment). */
const SPECTRUM_FLOOR = 0.05;

/**
 * Forward (to the whitened DCT) and inverse maps of groups laid out as m = p² rows × n patches (row-major).
 * Forward: the separable 2-D DCT of each patch (patch rows, then patch columns), then coefficient q = u·p + v
 * times 1/√max(d_q, floor); inverse: times √max(d_q, floor), then the transposed DCT. Groups of an even
 * number of patches run the WebAssembly kernel (wasm/assembly/groups.ts `whitenF64`, the same operations in
 * the same order), the others, or no kernels, the TypeScript below.
 */
export class PatchWhitener {
  private readonly p: number;
  private readonly m: number;
  private readonly C: Float64Array;
  /** 1/√max(d_q, floor) and √max(d_q, floor) per coefficient. */
  private readonly down: Float64Array;
  private readonly up: Float64Array;
  private readonly tmp: Float64Array;
  private readonly kernels: GroupKernels | null;

  constructor(spectrum: ArrayLike<number>, nMax: number) {
    const m = spectrum.length;
    const p = Math.round(Math.sqrt(m));
    if (p * p !== m) throw new RangeError(`spectrum of ${m} values is not a square patch`);
    this.p = p;
    this.m = m;
    this.C = dctMatrix(p);
    this.up = Float64Array.from(spectrum, (d) => Math.sqrt(Math.max(d, SPECTRUM_FLOOR)));
    this.down = this.up.map((g) => 1 / g);
    this.tmp = new Float64Array(m * nMax);
    const k = groupKernels();
    this.kernels = k && 8 * (2 * m * nMax + 2 * m) <= WHITEN_SCRATCH_BYTES ? k : null;
  }

  /** Y ← W·Y (n columns). */
  forward(Y: Float64Array, n: number): void {
    this.apply(Y, n, false);
  }

  /** X ← W⁻¹·X (n columns). */
  inverse(X: Float64Array, n: number): void {
    this.apply(X, n, true);
  }

  private apply(X: Float64Array, n: number, inverse: boolean): void {
    const { p, m, tmp, C } = this;
    const scale = inverse ? this.up : this.down;
    const size = m * n;
    const k = this.kernels;
    if (k && (n & 1) === 0) {
      // Layout: X block, scratch block, the p×p DCT, the m scale factors (written each call: other whiteners
      // of this thread share the region).
      const buf = k.memory.buffer;
      const x = WHITEN_BASE;
      const t = x + 8 * size;
      const c = t + 8 * size;
      const s = c + 8 * m;
      const view = new Float64Array(buf, x, size);
      view.set(X.subarray(0, size));
      new Float64Array(buf, c, m).set(C);
      new Float64Array(buf, s, m).set(scale);
      k.exports.whitenF64(x, p, n, c, s, t, inverse);
      X.set(view);
      return;
    }
    if (inverse) scaleRows(X, scale, n);
    alongPatch(X, tmp, C, p, n, inverse, true);
    alongPatch(tmp, X, C, p, n, inverse, false);
    if (!inverse) scaleRows(X, scale, n);
  }
}

/** X[q·n + k] *= scale[q]. */
function scaleRows(X: Float64Array, scale: Float64Array, n: number): void {
  for (let q = 0; q < scale.length; q++) {
    const s = scale[q];
    for (let k = 0; k < n; k++) X[q * n + k] *= s;
  }
}
