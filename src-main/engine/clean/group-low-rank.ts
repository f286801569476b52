/**
 * Low-rank estimate of one patch group: subtract the mean patch, keep the singular components above the
 * Gavish–Donoho threshold (or a fixed rank / threshold), add the mean back. The leading components come
 * from a few Lanczos bidiagonalisation steps (linalg/lanczos.ts); groups that keep nearly all of them
 * fall back to the exact eigen-decomposition of the smaller Gram matrix (linalg/small-symmetric-eigen.ts).
 *
 * References
 * - M. Gavish, D. L. Donoho, "The optimal hard threshold for singular values is 4/√3", IEEE Trans. Inf.
 *   Theory 60(8):5040–5053, 2014. doi:10.1109/TIT.2014.2323359: τ = λ*(β)·√n·σ.
 * - G. H. Golub, W. Kahan, J. SIAM Numer. Anal. 2(2), 1965: Lanczos bidiagonalisation (see lanczos.ts).
 */
import {
  eigenWorkspace,
  type LanczosArrays,
  lanczosBidiagonalize,
  lanczosGram,
  lanczosStartVector,
  ritzAbove,
  smallGram,
  smallSymmetricEigen,
  smallTridiagonalEigen,
} from '../linalg';
import { lambdaStar } from './gavish-donoho';
import type { PatchCrossCovariance } from './noise-psd-cross';
import { PatchWhitener } from './whiten-patches';

export interface GroupParams {
  /** Patch side in pixels (4–12). */
  patch: number;
  /** Patches per group, including the reference (8–96). */
  groupSize: number;
  /** Step of the reference-patch grid (1–patch). */
  stride: number;
  /** Half-width of the search window in pixels (patch–40). */
  searchRadius: number;
  /** Lanczos steps per group; groups keeping nearly all of them fall back to an exact eigen-decomposition. */
  lanczosSteps: number;
  /** Fixed rank per group instead of the Gavish–Donoho threshold. */
  rank?: number;
  /** Fixed singular-value threshold per group (grey levels) instead of the Gavish–Donoho threshold. */
  threshold?: number;
  /**
   * Second pass (wiener-groups.ts): group size, reference stride and search radius of the Wiener pass on
   * the first-pass estimate; absent: one pass only.
   */
  wiener?: { groupSize: number; stride: number; searchRadius: number };
  /**
   * Correlated noise: relative noise variance of each coefficient of the patch's 2-D DCT (patch² values, mean 1;
   * noise-psd-spectrum.ts). The low-rank pass then works on whitened patches (whiten-patches.ts) and the
   * Wiener pass uses one variance per coefficient. Absent: white noise.
   */
  noiseSpectrum?: number[];
  /**
   * Correlated noise: the cross-covariance of patch DCT coefficients by offset (noise-psd-cross.ts), with which
   * the Wiener pass gives the group average its own noise variance. Absent: the spectrum's variance is used.
   */
  noiseCrossCovariance?: PatchCrossCovariance;
}

/**
 * Ritz values above τ·LANCZOS_GUARD count as "possibly above τ" when deciding to stop. Fitted on: the
 * images bench/clean.bench.ts runs (test/fixtures/images camera, moon, page, text and samples/*, Gaussian
 * noise σ = 5, 10, 20), in the first clean commit (87d461e); no finer record of the fit exists.
 */
const LANCZOS_GUARD = 0.8;
/** Ritz values clearly below the threshold before the Lanczos process stops. Fitted on: as LANCZOS_GUARD. */
const LANCZOS_SPARE = 4;

/**
 * Low-rank estimate of one group matrix Y (m pixels × n patches, row-major, stride n): subtract the mean
 * patch, keep the singular components above the threshold, add the mean back.
 */
export class GroupLowRank {
  readonly Y: Float64Array;
  lastExact = false;
  private readonly m: number;
  private readonly kmax: number;
  private readonly U: Float64Array;
  private readonly V: Float64Array;
  private readonly alpha: Float64Array;
  private readonly beta: Float64Array;
  private readonly mean: Float64Array;
  private readonly start: Float64Array;
  private readonly ws: ReturnType<typeof eigenWorkspace>;
  private readonly exactWs: Map<number, ReturnType<typeof eigenWorkspace>> = new Map();
  private readonly tmp: Float64Array;
  private readonly coef: Float64Array;
  private readonly lanczos: LanczosArrays;
  private whitener: { spectrum: number[]; map: PatchWhitener } | null = null;

  constructor(m: number, nMax: number, steps: number) {
    this.m = m;
    this.kmax = Math.max(1, steps);
    this.Y = new Float64Array(m * nMax);
    this.U = new Float64Array((this.kmax + 1) * m);
    this.V = new Float64Array((this.kmax + 2) * nMax);
    this.alpha = new Float64Array(this.kmax + 1);
    this.beta = new Float64Array(this.kmax + 1);
    this.mean = new Float64Array(m);
    this.start = lanczosStartVector(nMax);
    this.ws = eigenWorkspace(this.kmax + 1);
    this.tmp = new Float64Array(Math.max(m, nMax));
    this.coef = new Float64Array(nMax);
    this.lanczos = { U: this.U, V: this.V, alpha: this.alpha, beta: this.beta, tmp: this.tmp };
  }

  /** Writes the estimate to `out` (same layout as Y) and returns the kept rank. */
  estimate(n: number, sigma: number, params: GroupParams, out: Float64Array): number {
    const { m, Y, mean } = this;
    this.lastExact = false;
    const whiten = params.noiseSpectrum?.length === m ? this.whitenerFor(params.noiseSpectrum) : null;
    whiten?.forward(Y, n);
    for (let i = 0; i < m; i++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += Y[i * n + k];
      s /= n;
      mean[i] = s;
      for (let k = 0; k < n; k++) Y[i * n + k] -= s;
    }
    // After removing the mean patch the noise lives in n−1 dimensions (the centring projector has rank n−1).
    const nEff = Math.max(1, n - 1);
    const big = Math.max(m, nEff);
    const beta = Math.min(m, nEff) / big;
    const tau = params.threshold ?? lambdaStar(beta) * Math.sqrt(big) * sigma;
    const r = this.project(n, tau, params.rank, out);
    for (let i = 0; i < m; i++) for (let k = 0; k < n; k++) out[i * n + k] += mean[i];
    whiten?.inverse(out, n);
    return r;
  }

  /** The whitening map of a spectrum, built once per spectrum. */
  private whitenerFor(spectrum: number[]): PatchWhitener {
    if (this.whitener?.spectrum !== spectrum)
      this.whitener = { spectrum, map: new PatchWhitener(spectrum, this.Y.length / this.m) };
    return this.whitener.map;
  }

  /** Rank-r projection of the centred Y into out. */
  private project(n: number, tau: number, fixedRank: number | undefined, out: Float64Array): number {
    const { m, Y, U, V, alpha, beta, tmp } = this;
    const kmax = Math.min(this.kmax, m, n);
    let fro = 0;
    for (let i = 0; i < m * n; i++) fro += Y[i] * Y[i];
    out.fill(0, 0, m * n);
    if (fixedRank === 0 || (fixedRank === undefined && fro <= tau * tau) || fro === 0) return 0;
    const tiny = Math.sqrt(fro) * 1e-13;
    // Stop once LANCZOS_SPARE Ritz values lie clearly below the threshold: Lanczos captures the leading
    // (above-threshold) components first, so the rest of the spectrum is not needed.
    const guard = LANCZOS_GUARD * LANCZOS_GUARD * tau * tau;
    const steps = lanczosBidiagonalize(Y, m, n, kmax, this.start, tiny, this.lanczos, (k) =>
      fixedRank === undefined
        ? k >= 3 && k - ritzAbove(alpha, beta, k, guard) >= LANCZOS_SPARE
        : k >= fixedRank + 2,
    );
    if (steps === 0) return 0;
    // Uᵀ Y = B̃ Ṽᵀ with B̃ = [B_k, β_k e_k]; its Gram T = B̃ B̃ᵀ is tridiagonal.
    const ws = this.ws;
    lanczosGram(alpha, beta, steps, ws.d, ws.e);
    smallTridiagonalEigen(ws, steps);
    let r = 0;
    if (fixedRank !== undefined) r = Math.min(fixedRank, steps);
    else for (let i = steps - 1; i >= 0 && ws.d[i] > tau * tau; i--) r++;
    // Lanczos is exact once the Krylov space is complete; otherwise trust only ranks well inside it.
    const full = Math.min(m, n - 1);
    if (steps < full && (fixedRank === undefined ? r : fixedRank) >= steps - 1)
      return this.exact(n, tau, fixedRank, out);
    // X = U P_r P_rᵀ (B̃ Ṽᵀ): coefficients c_t = Σ_i P[i,t] (α_i v_i + β_i v_{i+1}).
    const c = this.coef;
    const P = ws.V;
    for (let t = 0; t < r; t++) {
      const col = steps - 1 - t;
      for (let k = 0; k < n; k++) c[k] = 0;
      for (let i = 0; i < steps; i++) {
        const w = P[i * steps + col];
        const wa = w * alpha[i];
        const wb = w * beta[i];
        const o = i * n;
        for (let k = 0; k < n; k++) c[k] += wa * V[o + k] + wb * V[o + n + k];
      }
      // left vector u = U P[:, col]
      for (let i = 0; i < m; i++) {
        let s = 0;
        for (let q = 0; q < steps; q++) s += U[q * m + i] * P[q * steps + col];
        tmp[i] = s;
      }
      for (let i = 0; i < m; i++) {
        const ui = tmp[i];
        const row = i * n;
        for (let k = 0; k < n; k++) out[row + k] += ui * c[k];
      }
    }
    return r;
  }

  /** All singular values (descending) of Y after removing the mean patch; Y is destroyed. */
  centredSingularValues(n: number): Float64Array {
    const { m, Y } = this;
    for (let i = 0; i < m; i++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += Y[i * n + k];
      s /= n;
      for (let k = 0; k < n; k++) Y[i * n + k] -= s;
    }
    const small = Math.min(m, n);
    const ws = eigenWorkspace(small);
    smallGram(Y, m, n, ws.V);
    smallSymmetricEigen(ws);
    const out = new Float64Array(small);
    for (let i = 0; i < small; i++) out[i] = Math.sqrt(Math.max(0, ws.d[small - 1 - i]));
    return out;
  }

  /** Exact path: eigen-decomposition of the smaller Gram matrix. */
  private exact(n: number, tau: number, fixedRank: number | undefined, out: Float64Array): number {
    const { m, Y } = this;
    this.lastExact = true;
    const small = Math.min(m, n);
    let ws = this.exactWs.get(small);
    if (!ws) {
      ws = eigenWorkspace(small);
      this.exactWs.set(small, ws);
    }
    const G = ws.V;
    const byCols = smallGram(Y, m, n, G); // Gram YᵀY (n×n) when there are fewer patches than pixels.
    smallSymmetricEigen(ws);
    let r = 0;
    if (fixedRank !== undefined) r = Math.min(fixedRank, small);
    else for (let i = small - 1; i >= 0 && ws.d[i] > tau * tau; i--) r++;
    out.fill(0, 0, m * n);
    const tmp = this.tmp;
    for (let t = 0; t < r; t++) {
      const col = small - 1 - t;
      if (byCols) {
        // X += (Y v)(vᵀ)
        for (let i = 0; i < m; i++) {
          let s = 0;
          for (let k = 0; k < n; k++) s += Y[i * n + k] * G[k * n + col];
          tmp[i] = s;
        }
        for (let i = 0; i < m; i++) for (let k = 0; k < n; k++) out[i * n + k] += tmp[i] * G[k * n + col];
      } else {
        // X += u (uᵀ Y)
        for (let k = 0; k < n; k++) {
          let s = 0;
          for (let i = 0; i < m; i++) s += G[i * m + col] * Y[i * n + k];
          tmp[k] = s;
        }
        for (let i = 0; i < m; i++) for (let k = 0; k < n; k++) out[i * n + k] += G[i * m + col] * tmp[k];
      }
    }
    return r;
  }
}
