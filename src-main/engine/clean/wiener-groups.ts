/**
 * Second pass of the patch-group denoiser: empirical Wiener shrinkage of each group in a fixed 3-D
 * transform, with the first-pass (basic) estimate as the oracle.
 *
 * Reference
 * - K. Dabov, A. Foi, V. Katkovnik, K. Egiazarian, "Image denoising by sparse 3-D transform-domain
 *   collaborative filtering", IEEE Trans. Image Process. 16(8):2080–2095, 2007. doi:10.1109/TIP.2007.901238.
 *   The two-step scheme: block matching on the basic estimate; the noisy group and the basic group go
 *   through the same orthonormal 3-D transform (2-D DCT of each patch, then a 1-D transform across the
 *   group, Haar there); Wiener coefficients w = b²/(b² + σ²) from the basic coefficients b scale the noisy
 *   ones; aggregation weights ∝ 1/(σ²·Σw²) (their Sec. III; equation numbers not checked here).
 *
 * A data-adaptive basis (the PCA of the basic group) was tried first and lost up to 1.5 dB on smooth images at
 * σ = 20 (the basis follows the basic estimate's own errors, which are correlated with the noise); the fixed
 * transform does not (bench numbers in the commit that added this file).
 *
 * Split independence as in patch-groups.ts: groups are visited in global raster order of one reference
 * grid, matching reads the basic estimate only, and each band accumulates only into its own rows.
 */
import { BandAggregate, forEachGroup } from './block-matching';
import type { GroupParams } from './group-low-rank';
import { groupAverageVariances } from './noise-psd-cross';
import type { BandJob, BandResult, GroupStats } from './patch-groups';
import { type GroupKernels, groupKernels, WIENER_BASE, WIENER_SCRATCH_BYTES } from './wasm/runtime';

/** Orthonormal DCT-II matrix of order n, row-major: C[f·n + t] (common definition). */
export function dctMatrix(n: number): Float64Array {
  const C = new Float64Array(n * n);
  for (let f = 0; f < n; f++) {
    const s = f === 0 ? Math.sqrt(1 / n) : Math.sqrt(2 / n);
    for (let t = 0; t < n; t++) C[f * n + t] = s * Math.cos((Math.PI * (2 * t + 1) * f) / (2 * n));
  }
  return C;
}

/**
 * In place, orthonormal multi-level Haar transform of X[o … o + n) (n a power of two): forward puts the
 * coarsest average first, then details from coarse to fine; inverse undoes it. h: scratch of length n.
 */
function haar(X: Float64Array, o: number, n: number, inverse: boolean, h: Float64Array) {
  const r = Math.SQRT1_2;
  if (!inverse)
    for (let len = n; len > 1; len >>= 1) {
      const half = len >> 1;
      for (let k = 0; k < half; k++) {
        const a = X[o + 2 * k];
        const b = X[o + 2 * k + 1];
        h[k] = (a + b) * r;
        h[half + k] = (a - b) * r;
      }
      for (let k = 0; k < len; k++) X[o + k] = h[k];
    }
  else
    for (let len = 2; len <= n; len <<= 1) {
      const half = len >> 1;
      for (let k = 0; k < half; k++) {
        const a = X[o + k];
        const d = X[o + half + k];
        h[2 * k] = (a + d) * r;
        h[2 * k + 1] = (a - d) * r;
      }
      for (let k = 0; k < len; k++) X[o + k] = h[k];
    }
}

/**
 * dst = the 1-D transform C (order p, or its transpose when inverse) along patch rows (byRows) or patch
 * columns of every patch in src (layout (a·p + b)·n + k).
 */
export function alongPatch(
  src: Float64Array,
  dst: Float64Array,
  C: Float64Array,
  p: number,
  n: number,
  inverse: boolean,
  byRows: boolean,
) {
  const cs = byRows ? p * n : n;
  for (let a = 0; a < p; a++)
    for (let b = 0; b < p; b++) {
      const f = byRows ? a : b;
      const base = byRows ? b * n : a * p * n;
      const o = (a * p + b) * n;
      for (let k = 0; k < n; k++) {
        let s = 0;
        for (let c = 0; c < p; c++) s += (inverse ? C[c * p + f] : C[f * p + c]) * src[base + c * cs + k];
        dst[o + k] = s;
      }
    }
}

/**
 * Wiener estimate of one group in a fixed separable 3-D transform (patch rows, patch columns, group).
 * Yn, Yb and the estimate live in the WebAssembly kernels' memory when they load (call `views()` after
 * anything that may grow it), and groups of 2, 4, 8, … patches run the kernel (wasm/assembly/groups.ts,
 * the same operations in the same order); other group sizes, or no kernels, run the TypeScript below.
 */
class GroupWiener {
  Yn: Float64Array;
  Yb: Float64Array;
  out: Float64Array;
  private readonly p: number;
  private readonly Cp: Float64Array;
  private readonly Cn = new Map<number, Float64Array>();
  private readonly t: Float64Array;
  private readonly h: Float64Array;
  private readonly kernels: GroupKernels | null;
  private readonly block: number;

  constructor(p: number, nMax: number) {
    this.p = p;
    this.Cp = dctMatrix(p);
    this.block = p * p * nMax;
    this.t = new Float64Array(this.block);
    this.h = new Float64Array(nMax);
    const k = groupKernels();
    // Four blocks (Yn, Yb, out, scratch), a row of nMax, the p×p DCT and 2·p² variances in the fixed region.
    const fits = 8 * (4 * this.block + nMax + 3 * p * p) <= WIENER_SCRATCH_BYTES;
    this.kernels = k && fits ? k : null;
    this.Yn = new Float64Array(this.block);
    this.Yb = new Float64Array(this.block);
    this.out = new Float64Array(this.block);
    this.views();
  }

  /** (Re)make the views into the kernels' memory if it was grown since (no-op without kernels). */
  views(): void {
    const k = this.kernels;
    if (!k || this.Yn.buffer === k.memory.buffer) return;
    const buf = k.memory.buffer;
    const b = this.block;
    this.Yn = new Float64Array(buf, WIENER_BASE, b);
    this.Yb = new Float64Array(buf, WIENER_BASE + 8 * b, b);
    this.out = new Float64Array(buf, WIENER_BASE + 16 * b, b);
    new Float64Array(buf, WIENER_BASE + 32 * b + 8 * this.h.length, this.Cp.length).set(this.Cp);
  }

  /** In place: forward or inverse 3-D transform of X (m × n, stride n). */
  private transform(X: Float64Array, n: number, inverse: boolean) {
    const { p, Cp, t } = this;
    let Cn = this.Cn.get(n);
    if (!Cn) {
      Cn = dctMatrix(n);
      this.Cn.set(n, Cn);
    }
    const m = p * p;
    // Along the group: each pixel row (n values); orthonormal Haar when n is a power of two.
    if ((n & (n - 1)) === 0) {
      for (let i = 0; i < m; i++) haar(X, i * n, n, inverse, this.h);
      t.set(X.subarray(0, m * n));
    } else
      for (let i = 0; i < m; i++) {
        const o = i * n;
        for (let f = 0; f < n; f++) {
          let s = 0;
          if (inverse) for (let k = 0; k < n; k++) s += Cn[k * n + f] * X[o + k];
          else for (let k = 0; k < n; k++) s += Cn[f * n + k] * X[o + k];
          t[o + f] = s;
        }
      }
    // Patch rows (stride p·n), then patch columns (stride n): X[(a·p + b)·n + k].
    alongPatch(t, X, Cp, p, n, inverse, true);
    alongPatch(X, t, Cp, p, n, inverse, false);
    X.set(t.subarray(0, m * n));
  }

  /**
   * Writes the estimate of the group in Yn, Yb (n patches) to `out` and returns Σw² over all coefficients, or
   * Σw²·d with a noise spectrum d (relative variance per 2-D DCT coefficient, correlated noise; Mäkinen, Azzari &
   * Foi 2020).
   */
  estimate(n: number, sigma: number, spectrum?: number[], average?: Float64Array): number {
    const m = this.p * this.p;
    const { Yn, Yb, out } = this;
    const s2 = sigma * sigma;
    const k = this.kernels;
    const spec = spectrum?.length === m ? spectrum : undefined;
    if (k && n >= 2 && (n & (n - 1)) === 0) {
      const b = WIENER_BASE;
      const e = 8 * this.block;
      const cp = b + 4 * e + 8 * this.h.length;
      if (!spec)
        return k.exports.wienerGroupF64(b, b + e, b + 2 * e, this.p, n, s2, cp, b + 3 * e, b + 4 * e);
      const at = cp + 8 * m;
      new Float64Array(k.memory.buffer, at, m).set(spec);
      new Float64Array(k.memory.buffer, at + 8 * m, m).set(average ?? spec);
      return k.exports.wienerGroupSpectrumF64(
        b,
        b + e,
        b + 2 * e,
        this.p,
        n,
        s2,
        cp,
        b + 3 * e,
        b + 4 * e,
        at,
        at + 8 * m,
      );
    }
    this.transform(Yn, n, false);
    this.transform(Yb, n, false);
    let w2 = 0;
    if (spec)
      for (let q = 0; q < m * n; q++) {
        const dq = spec[Math.floor(q / n)];
        const d = q % n === 0 && average ? average[q / n] : dq;
        const b2 = Yb[q] * Yb[q];
        const w = b2 / (b2 + s2 * d);
        w2 += w * w * dq;
        out[q] = w * Yn[q];
      }
    else
      for (let q = 0; q < m * n; q++) {
        const b2 = Yb[q] * Yb[q];
        const w = b2 / (b2 + s2);
        w2 += w * w;
        out[q] = w * Yn[q];
      }
    this.transform(out, n, true);
    return w2;
  }
}

/**
 * Second pass over the job's rows [rowStart, rowEnd). `basic` holds the first-pass planes, valid at least on the rows
 * the groups reaching the band can read (see wienerMargin); `job.planes` are the input planes.
 */
export function wienerGroupsBand(
  job: BandJob,
  basic: Float32Array[],
  onProgress?: (fraction: number) => void,
): BandResult {
  const { planes: noisy, width, height, sigmas, params, rowStart, rowEnd } = job;
  const p = Math.min(params.patch, width, height);
  const K = params.groupSize;
  const m = p * p;
  const agg = new BandAggregate(noisy.length, width, rowStart, rowEnd);
  const stats: GroupStats = { groups: 0, rankSum: 0, rankMin: 0, rankMax: 0, exact: 0 };
  const gw = new GroupWiener(p, K);
  const cross = params.noiseCrossCovariance;
  const spectrum = params.noiseSpectrum;
  // The group average's own variance (noise-psd-cross.ts), when the table was made for this patch size.
  const average = spectrum && cross?.p === p ? new Float64Array(m) : undefined;
  const pairs = new Int32Array((K * (K - 1)) / 2);
  const visit = (count: number, posY: Int32Array, posX: Int32Array) => {
    stats.groups++;
    gw.views();
    if (average && spectrum && cross)
      groupAverageVariances(cross, spectrum, count, posY, posX, average, pairs);
    const { Yn, Yb } = gw;
    for (let c = 0; c < noisy.length; c++) {
      const src = noisy[c];
      const bas = basic[c];
      for (let k = 0; k < count; k++) {
        const base = posY[k] * width + posX[k];
        for (let i = 0; i < p; i++)
          for (let j = 0; j < p; j++) {
            Yn[(i * p + j) * count + k] = src[base + i * width + j];
            Yb[(i * p + j) * count + k] = bas[base + i * width + j];
          }
      }
      // Weight ∝ 1/(σ²·Σw²) (Dabov et al. 2007), scaled by m·n to sit beside the first pass's weights.
      const w = (m * count) / Math.max(1e-12, gw.estimate(count, sigmas[c], spectrum, average));
      agg.add(c, gw.out, count, posY, posX, p, w);
    }
  };
  forEachGroup(basic[0], width, height, { ...params, patch: p }, rowStart, rowEnd, visit, onProgress);
  const planes = agg.result(basic);
  return { planes, stats };
}

/**
 * Rows above and below a band whose basic estimate the second pass reads: references up to R + p − 1 rows
 * away reach the band, and their candidates lie up to R rows further.
 */
export function wienerMargin(params: GroupParams): number {
  return 2 * params.searchRadius + params.patch;
}
