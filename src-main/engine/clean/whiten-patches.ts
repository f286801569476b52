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
import { dctMatrix } from './wiener-groups';

/** Smallest relative noise variance used for whitening (chosen here; see the file comment). */
const SPECTRUM_FLOOR = 0.05;

/** Forward (to the whitened DCT) and inverse maps of groups laid out as m = p² rows × n patches (row-major). */
export class PatchWhitener {
  private readonly m: number;
  /** Forward map W (m×m): W[q, t] = C[u, i]·C[v, j] / √max(d_q, floor), q = u·p + v, t = i·p + j. */
  private readonly W: Float64Array;
  /** Inverse map W⁻¹ (m×m). */
  private readonly Wi: Float64Array;
  private readonly tmp: Float64Array;

  constructor(spectrum: ArrayLike<number>, nMax: number) {
    const m = spectrum.length;
    const p = Math.round(Math.sqrt(m));
    if (p * p !== m) throw new RangeError(`spectrum of ${m} values is not a square patch`);
    this.m = m;
    const C = dctMatrix(p);
    this.W = new Float64Array(m * m);
    this.Wi = new Float64Array(m * m);
    for (let u = 0; u < p; u++)
      for (let v = 0; v < p; v++) {
        const q = u * p + v;
        const g = Math.sqrt(Math.max(spectrum[q], SPECTRUM_FLOOR));
        for (let i = 0; i < p; i++)
          for (let j = 0; j < p; j++) {
            const c = C[u * p + i] * C[v * p + j];
            this.W[q * m + i * p + j] = c / g;
            this.Wi[(i * p + j) * m + q] = c * g;
          }
      }
    this.tmp = new Float64Array(m * nMax);
  }

  /** Y ← W·Y (n columns). */
  forward(Y: Float64Array, n: number): void {
    this.apply(this.W, Y, n);
  }

  /** X ← W⁻¹·X (n columns). */
  inverse(X: Float64Array, n: number): void {
    this.apply(this.Wi, X, n);
  }

  private apply(M: Float64Array, X: Float64Array, n: number): void {
    const { m, tmp } = this;
    tmp.fill(0, 0, m * n);
    for (let q = 0; q < m; q++) {
      const o = q * n;
      for (let t = 0; t < m; t++) {
        const w = M[q * m + t];
        if (w === 0) continue;
        const src = t * n;
        for (let k = 0; k < n; k++) tmp[o + k] += w * X[src + k];
      }
    }
    X.set(tmp.subarray(0, m * n));
  }
}
