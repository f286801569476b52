/**
 * Structural similarity (SSIM) index with an 11×11 Gaussian window.
 *
 * References
 * - Z. Wang, A. C. Bovik, H. R. Sheikh, E. P. Simoncelli, "Image quality assessment: from error
 *   visibility to structural similarity", IEEE Trans. Image Processing 13(4):600–612, 2004.
 *   doi:10.1109/TIP.2003.819861. SSIM(x,y) = (2μxμy+C1)(2σxy+C2) / ((μx²+μy²+C1)(σx²+σy²+C2)),
 *   C1 = (K1·L)², C2 = (K2·L)², K1 = 0.01, K2 = 0.03, an 11×11 circular-symmetric Gaussian window with
 *   σ = 1.5 normalised to unit sum, and the mean over the window positions (MSSIM).
 * - The exact pooling matches scikit-image 0.19 `structural_similarity(gaussian_weights=True, sigma=1.5,
 *   use_sample_covariance=False)`: population (weighted) variances, mean over the window centres whose
 *   window lies fully inside the image (rows 5…H−6, columns 5…W−6). See
 *   test/fixtures/reference/image_metrics.json, "ssim_algorithm_for_reimplementation".
 *
 * Speed: the 2-D window is separable (w = g⊗g), so each of the five local sums (x, y, x², y², xy) is a
 * horizontal 11-tap pass followed by a vertical 11-tap pass over a ring of 11 filtered rows: O(N) time,
 * O(11·W) memory. Accumulation is in float64.
 */
import { invalidParameterError } from '../../contract';

export interface SsimOptions {
  /** K1 stabiliser. Default 0.01 (Wang et al. 2004). */
  k1?: number;
  /** K2 stabiliser. Default 0.03 (Wang et al. 2004). */
  k2?: number;
  /** Gaussian σ in pixels. Default 1.5. */
  sigma?: number;
  /** Window radius in pixels; the window is (2r+1)². Default 5 (11×11). */
  radius?: number;
}

export const SSIM_DEFAULTS: Required<SsimOptions> = { k1: 0.01, k2: 0.03, sigma: 1.5, radius: 5 };

/** Normalised 1-D Gaussian taps g(i) = exp(−i²/2σ²)/Σ, i = −r…r. */
export function gaussianTaps(sigma: number, radius: number): Float64Array {
  const g = new Float64Array(2 * radius + 1);
  let sum = 0;
  for (let i = -radius; i <= radius; i++) {
    const v = Math.exp(-(i * i) / (2 * sigma * sigma));
    g[i + radius] = v;
    sum += v;
  }
  for (let i = 0; i < g.length; i++) g[i] /= sum;
  return g;
}

/**
 * Mean SSIM of two planes of width×height samples (row-major), on the data range L (255 for 8-bit,
 * 65535 for 16-bit). Returns a value in [−1, 1]; 1 for identical planes.
 * @param dataRange - L, the dynamic range of the samples, > 0.
 * @param options - K1, K2, σ and window radius; defaults per Wang et al. 2004.
 * @throws UsageError if the sizes disagree or the plane is smaller than the window (11×11 by default).
 * @example ssim(ref, test, 512, 512, 255)
 */
export function ssim(
  a: ArrayLike<number>,
  b: ArrayLike<number>,
  width: number,
  height: number,
  dataRange: number,
  options: SsimOptions = {},
): number {
  const { k1, k2, sigma, radius } = { ...SSIM_DEFAULTS, ...options };
  const side = 2 * radius + 1;
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1)
    throw invalidParameterError('width and height', 'positive integers', `${width}×${height}`);
  if (a.length !== width * height || b.length !== width * height)
    throw invalidParameterError(
      'planes',
      `arrays of width·height = ${width * height} samples (got ${a.length} and ${b.length})`,
      b.length,
    );
  if (width < side || height < side)
    throw invalidParameterError(
      'image size',
      `at least ${side}×${side} pixels for the SSIM window`,
      `${width}×${height}`,
    );
  if (!(Number.isFinite(dataRange) && dataRange > 0))
    throw invalidParameterError('dataRange', 'finite number > 0', dataRange);
  if (!(Number.isInteger(radius) && radius >= 1))
    throw invalidParameterError('radius', 'integer ≥ 1', radius);
  if (!(sigma > 0)) throw invalidParameterError('sigma', 'number > 0', sigma);

  const g = gaussianTaps(sigma, radius);
  const C1 = k1 * dataRange * (k1 * dataRange);
  const C2 = k2 * dataRange * (k2 * dataRange);
  const wv = width - 2 * radius;
  const hv = height - 2 * radius;
  // Ring of `side` horizontally filtered rows, five quantities each.
  const ring = new Float64Array(side * 5 * wv);
  const stride = 5 * wv;

  const filterRow = (y: number) => {
    const off = (y % side) * stride;
    const row = y * width;
    for (let j = 0; j < wv; j++) {
      let sx = 0;
      let sy = 0;
      let sxx = 0;
      let syy = 0;
      let sxy = 0;
      const base = row + j;
      for (let t = 0; t < side; t++) {
        const w = g[t];
        const x = a[base + t];
        const v = b[base + t];
        const wx = w * x;
        const wy = w * v;
        sx += wx;
        sy += wy;
        sxx += wx * x;
        syy += wy * v;
        sxy += wx * v;
      }
      ring[off + j] = sx;
      ring[off + wv + j] = sy;
      ring[off + 2 * wv + j] = sxx;
      ring[off + 3 * wv + j] = syy;
      ring[off + 4 * wv + j] = sxy;
    }
  };

  const mx = new Float64Array(wv);
  const my = new Float64Array(wv);
  const mxx = new Float64Array(wv);
  const myy = new Float64Array(wv);
  const mxy = new Float64Array(wv);
  let total = 0;
  for (let y = 0; y < height; y++) {
    filterRow(y);
    if (y < side - 1) continue;
    // Window rows y−2r … y, centre row y−r.
    mx.fill(0);
    my.fill(0);
    mxx.fill(0);
    myy.fill(0);
    mxy.fill(0);
    for (let t = 0; t < side; t++) {
      const w = g[t];
      const off = ((y - side + 1 + t) % side) * stride;
      for (let j = 0; j < wv; j++) {
        mx[j] += w * ring[off + j];
        my[j] += w * ring[off + wv + j];
        mxx[j] += w * ring[off + 2 * wv + j];
        myy[j] += w * ring[off + 3 * wv + j];
        mxy[j] += w * ring[off + 4 * wv + j];
      }
    }
    let rowSum = 0;
    for (let j = 0; j < wv; j++) {
      const ux = mx[j];
      const uy = my[j];
      const vx = mxx[j] - ux * ux;
      const vy = myy[j] - uy * uy;
      const vxy = mxy[j] - ux * uy;
      rowSum += ((2 * ux * uy + C1) * (2 * vxy + C2)) / ((ux * ux + uy * uy + C1) * (vx + vy + C2));
    }
    total += rowSum;
  }
  return total / (wv * hv);
}

/** Mean of the per-channel SSIM (as skimage does with `channel_axis`). */
export function ssimPlanes(
  a: ArrayLike<number>[],
  b: ArrayLike<number>[],
  width: number,
  height: number,
  dataRange: number,
  options: SsimOptions = {},
): number {
  if (a.length !== b.length || a.length === 0)
    throw invalidParameterError(
      'planes',
      `two non-empty lists of equal length (got ${a.length} and ${b.length})`,
      b.length,
    );
  let s = 0;
  for (let c = 0; c < a.length; c++) s += ssim(a[c], b[c], width, height, dataRange, options);
  return s / a.length;
}
