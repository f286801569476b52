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
 * Speed: the 2-D window is separable (w = g⊗g) and symmetric, so each of the five local sums
 * (x, y, x², y², xy) is a horizontal 11-tap pass followed by a vertical 11-tap pass over a ring of 11
 * filtered rows, adding mirrored samples before multiplying: O(N) time, O(11·W) memory. All
 * accumulation is in float64. Where WebAssembly SIMD is available the rows run in ./wasm (bit-identical).
 */
import { invalidParameterError } from '../../contract';
import { checkPlaneLists } from './psnr';
import { releaseRing, type SsimRing, ssimRowsWasm } from './wasm/runtime';

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

const SSIM_DEFAULTS: Required<SsimOptions> = { k1: 0.01, k2: 0.03, sigma: 1.5, radius: 5 };

/** Normalised 1-D Gaussian taps g(i) = exp(−i²/2σ²)/Σ, i = −r…r. */
function gaussianTaps(sigma: number, radius: number): Float64Array {
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
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1)
    throw invalidParameterError('width and height', 'positive integers', `${width}×${height}`);
  if (a.length !== width * height || b.length !== width * height)
    throw invalidParameterError(
      'planes',
      `arrays of width·height = ${width * height} samples (got ${a.length} and ${b.length})`,
      b.length,
    );
  // The whole planes as one band: the stream forms every sum in this same order.
  const stream = new SsimStream(width, height, dataRange, options);
  stream.addRows(a, b, height);
  return stream.value();
}

/**
 * The SSIM map's row sums for window rows `from` … `to` − 1 (window row r is centred on image row r + radius;
 * there are height − 2·radius of them), from the rows `from` … `to` + 2·radius − 1 of the two planes, given
 * starting at a[0] and b[0]. Each sum is formed exactly as in {@link ssim}, whose total is these sums added in
 * row order from 0, so a plane split into row ranges (on several threads) gives {@link ssim} bit for bit:
 * `ssimFromRowSums`. Wang et al. 2004, the settings of {@link ssim}.
 * @throws UsageError as {@link ssim}; RangeError when the range is empty or outside the window rows.
 */
export function ssimRowSums(
  a: ArrayLike<number>,
  b: ArrayLike<number>,
  width: number,
  height: number,
  dataRange: number,
  from: number,
  to: number,
  options: SsimOptions = {},
): Float64Array {
  const stream = new SsimStream(width, height, dataRange, options);
  return stream.rowSums(a, b, from, to);
}

/** The mean SSIM from every window row's sum (in row order), as {@link ssim} pools them. */
export function ssimFromRowSums(sums: ArrayLike<number>, width: number, height: number, radius = 5): number {
  let total = 0;
  for (let i = 0; i < sums.length; i++) total += sums[i];
  return total / ((width - 2 * radius) * (height - 2 * radius));
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
  checkPlaneLists(a, b);
  let s = 0;
  for (let c = 0; c < a.length; c++) s += ssim(a[c], b[c], width, height, dataRange, options);
  return s / a.length;
}

/**
 * {@link ssim} of two planes fed a band of rows at a time, for planes that are never held whole. The ring of
 * 2r + 1 horizontally filtered rows carries the window's overlap from one band to the next (a window centred
 * on row y reads rows y − r … y + r, which may span two bands), and every sum is formed in the same order
 * as in {@link ssim}, so `value()` equals `ssim(a, b, width, height, L, options)` of the whole planes bit for
 * bit (Wang et al. 2004, the settings of {@link ssim}). Memory: O((2r + 1)·width).
 * @throws UsageError as {@link ssim} for sizes and options; RangeError when more rows than `height` are added.
 */
export class SsimStream {
  private readonly g: Float64Array;
  private readonly C1: number;
  private readonly C2: number;
  private readonly R: number;
  private readonly side: number;
  private readonly wv: number;
  private readonly hv: number;
  private readonly stride: number;
  /**
   * The TypeScript path's arrays, made on its first use: where the kernel runs, a stream's ring lives in the
   * kernel's memory (./wasm/runtime) and these would only be fresh pages (a report's SSIM makes 8 streams
   * per plane, 1.4 MB of ring each on a 3300-wide scan).
   */
  private ts: { ring: Float64Array; rows: Float64Array[]; offs: Int32Array } | undefined;
  /** The state the WebAssembly kernel works on (./wasm/runtime). */
  private readonly kernelState: SsimRing;
  private y = 0;
  private total = 0;

  constructor(
    private readonly width: number,
    private readonly height: number,
    dataRange: number,
    options: SsimOptions = {},
  ) {
    const { k1, k2, sigma, radius } = { ...SSIM_DEFAULTS, ...options };
    const side = 2 * radius + 1;
    if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1)
      throw invalidParameterError('width and height', 'positive integers', `${width}×${height}`);
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
    this.g = gaussianTaps(sigma, radius);
    this.C1 = k1 * dataRange * (k1 * dataRange);
    this.C2 = k2 * dataRange * (k2 * dataRange);
    this.R = radius;
    this.side = side;
    this.wv = width - 2 * radius;
    this.hv = height - 2 * radius;
    this.stride = 5 * this.wv;
    this.kernelState = {
      width,
      R: radius,
      g: this.g,
      ringLength: side * this.stride,
      ring: () => this.arrays().ring,
      ownRing: () => this.ts?.ring,
      finished: () => this.y === this.height,
      C1: this.C1,
      C2: this.C2,
    };
  }

  /** The TypeScript path's ring (zeros at first, as the kernel's copy of a new stream), rows and offsets. */
  private arrays(): { ring: Float64Array; rows: Float64Array[]; offs: Int32Array } {
    this.ts ??= {
      ring: new Float64Array(this.side * this.stride),
      rows: Array.from({ length: 5 }, () => new Float64Array(this.width)),
      offs: new Int32Array(2 * this.R),
    };
    return this.ts;
  }

  /** Add the next `rows` rows of both planes, starting at a[aOff] and b[bOff] (row stride = width). */
  addRows(a: ArrayLike<number>, b: ArrayLike<number>, rows: number, aOff = 0, bOff = 0): void {
    if (this.y + rows > this.height)
      throw new RangeError(`SsimStream: ${this.y + rows} rows added to a plane of ${this.height}`);
    const k = this.kernelState;
    const fast = ssimRowsWasm(k, a, b, aOff, bOff, this.y, rows, this.side - 1, this.total, null);
    if (fast !== null) {
      this.total = fast;
      this.y += rows;
      return;
    }
    releaseRing(k);
    for (let i = 0; i < rows; i++) {
      this.filterRow(a, b, aOff + i * this.width, bOff + i * this.width, this.y);
      if (this.y >= this.side - 1) this.total += this.windowRow(this.y);
      this.y++;
    }
  }

  /**
   * Start the stream at row n (before any row was added) when rows 0…n−1 of the two planes are identical
   * and equal to `a`'s rows (from aOff), without filtering them all. A window on identical rows has SSIM
   * exactly 1 in floating point (ux = uy, vx = vy = vxy, and 2·x·x = x·x + x·x exactly), so each window row
   * ending before row n adds exactly wv, as in {@link ssim}; the last 2r rows are filtered so that the
   * windows ending at row n and later read the same ring. The result stays equal to the whole-plane ssim.
   * @throws RangeError when rows were added already or n is out of range.
   */
  skipIdentical(n: number, a: ArrayLike<number>, aOff = 0): void {
    if (this.y !== 0 || n < 0 || n > this.height)
      throw new RangeError(`SsimStream: skipIdentical(${n}) after ${this.y} rows of ${this.height}`);
    releaseRing(this.kernelState);
    const windows = Math.max(0, n - this.side + 1);
    for (let i = 0; i < windows; i++) this.total += this.wv;
    for (let y = Math.max(0, n - 2 * this.R); y < n; y++) {
      const off = aOff + y * this.width;
      this.filterRow(a, a, off, off, y);
    }
    this.y = n;
  }

  /**
   * On a fresh stream: the row sums of window rows from … to − 1, reading the image rows from … to + 2r − 1
   * (given from a[0] and b[0]). The ring holds the same values at the same places as when every earlier row
   * was added, so each sum equals the one {@link addRows} would add.
   */
  rowSums(a: ArrayLike<number>, b: ArrayLike<number>, from: number, to: number): Float64Array {
    if (
      this.y !== 0 ||
      !(Number.isInteger(from) && Number.isInteger(to) && 0 <= from && from < to && to <= this.hv)
    )
      throw new RangeError(`SsimStream: window rows ${from}…${to} of ${this.hv} on a fresh stream only`);
    const out = new Float64Array(to - from);
    const last = to + this.side - 1;
    const first = from + this.side - 1;
    if (ssimRowsWasm(this.kernelState, a, b, 0, 0, from, last - from, first, 0, out) !== null) {
      this.y = this.height;
      return out;
    }
    releaseRing(this.kernelState);
    for (let y = from; y < last; y++) {
      const off = (y - from) * this.width;
      this.filterRow(a, b, off, off, y);
      if (y >= from + this.side - 1) out[y - from - this.side + 1] = this.windowRow(y);
    }
    this.y = this.height;
    return out;
  }

  /** Mean SSIM once every row has been added. @throws RangeError before that. */
  value(): number {
    if (this.y !== this.height)
      throw new RangeError(`SsimStream: ${this.y} of ${this.height} rows were added`);
    return this.total / (this.wv * this.hv);
  }

  private filterRow(a: ArrayLike<number>, b: ArrayLike<number>, ra: number, rb: number, y: number): void {
    const { width, stride, wv, R, g } = this;
    const { ring, rows } = this.arrays();
    const [rx, ry, rxx, ryy, rxy] = rows;
    const gc = g[R];
    for (let i = 0; i < width; i++) {
      const p = a[ra + i];
      const q = b[rb + i];
      rx[i] = p;
      ry[i] = q;
      rxx[i] = p * p;
      ryy[i] = q * q;
      rxy[i] = p * q;
    }
    const off = (y % this.side) * stride;
    for (let j = 0; j < wv; j++) {
      const c = j + R;
      let sx = gc * rx[c];
      let sy = gc * ry[c];
      let sxx = gc * rxx[c];
      let syy = gc * ryy[c];
      let sxy = gc * rxy[c];
      for (let t = 0; t < R; t++) {
        const w = g[t];
        const lo = j + t;
        const hi = j + 2 * R - t;
        sx += w * (rx[lo] + rx[hi]);
        sy += w * (ry[lo] + ry[hi]);
        sxx += w * (rxx[lo] + rxx[hi]);
        syy += w * (ryy[lo] + ryy[hi]);
        sxy += w * (rxy[lo] + rxy[hi]);
      }
      ring[off + j] = sx;
      ring[off + wv + j] = sy;
      ring[off + 2 * wv + j] = sxx;
      ring[off + 3 * wv + j] = syy;
      ring[off + 4 * wv + j] = sxy;
    }
  }

  /** Σ over the window centres of row y − r of the SSIM map (the window's last row is y). */
  private windowRow(y: number): number {
    const { stride, wv, R, g, side, C1, C2 } = this;
    const { ring, offs } = this.arrays();
    const gc = g[R];
    const base = y - side + 1;
    const oc = ((base + R) % side) * stride;
    // Ring offsets of the window's rows above (lo) and below (hi) the centre, once per row, not per sample.
    for (let t = 0; t < R; t++) {
      offs[2 * t] = ((base + t) % side) * stride;
      offs[2 * t + 1] = ((base + 2 * R - t) % side) * stride;
    }
    let rowSum = 0;
    for (let j = 0; j < wv; j++) {
      let ux = gc * ring[oc + j];
      let uy = gc * ring[oc + wv + j];
      let uxx = gc * ring[oc + 2 * wv + j];
      let uyy = gc * ring[oc + 3 * wv + j];
      let uxy = gc * ring[oc + 4 * wv + j];
      for (let t = 0; t < R; t++) {
        const w = g[t];
        const lo = offs[2 * t] + j;
        const hi = offs[2 * t + 1] + j;
        ux += w * (ring[lo] + ring[hi]);
        uy += w * (ring[lo + wv] + ring[hi + wv]);
        uxx += w * (ring[lo + 2 * wv] + ring[hi + 2 * wv]);
        uyy += w * (ring[lo + 3 * wv] + ring[hi + 3 * wv]);
        uxy += w * (ring[lo + 4 * wv] + ring[hi + 4 * wv]);
      }
      const vx = uxx - ux * ux;
      const vy = uyy - uy * uy;
      const vxy = uxy - ux * uy;
      rowSum += ((2 * ux * uy + C1) * (2 * vxy + C2)) / ((ux * ux + uy * uy + C1) * (vx + vy + C2));
    }
    return rowSum;
  }
}
