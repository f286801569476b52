/**
 * Mean squared error and peak signal-to-noise ratio between two planes: the engine's one PSNR module.
 * Every PSNR goes through {@link psnrFromMse} (10·log10(MAX²/MSE)) except the compressor's budget search,
 * which uses {@link psnrFromSse} (the same quantity evaluated as 10·log10(MAX²·N/SSE)); the Eckart–Young
 * optimum (eckart-young.ts `psnrFromFrobenius`) is psnrFromMse(‖E‖_F²/N).
 *
 * References
 * - PSNR = 10·log10(MAX² / MSE): the usual definition, e.g. R. C. Gonzalez, R. E. Woods, *Digital Image
 *   Processing*, and scikit-image 0.19 `skimage.metrics.peak_signal_noise_ratio` (same formula, float64).
 *   For 8-bit data MAX = 255; for 16-bit data MAX = 65535.
 */
import { invalidParameterError } from '../../contract';

/** Check two planes have the same, non-zero length. Returns that length. */
function checkSameLength(a: ArrayLike<number>, b: ArrayLike<number>, what = 'planes'): number {
  if (a.length !== b.length)
    throw invalidParameterError(
      what,
      `two arrays of equal length (got ${a.length} and ${b.length})`,
      b.length,
    );
  if (a.length === 0) throw invalidParameterError(what, 'non-empty arrays', 0);
  return a.length;
}

/**
 * Sum of squared differences Σ(aᵢ−bᵢ)², accumulated in float64 per block of 4096 samples and then
 * over blocks, so 12-megapixel planes keep about 15 significant digits.
 * @throws UsageError if the lengths differ or are zero.
 * @example sse([1, 2], [1, 4]) // 4
 */
export function sse(a: ArrayLike<number>, b: ArrayLike<number>): number {
  const n = checkSameLength(a, b);
  let total = 0;
  for (let start = 0; start < n; start += 4096) {
    const end = Math.min(n, start + 4096);
    let block = 0;
    for (let i = start; i < end; i++) {
      const d = a[i] - b[i];
      block += d * d;
    }
    total += block;
  }
  return total;
}

/**
 * Mean squared error, (1/N)·Σ(aᵢ−bᵢ)².
 * @throws UsageError if the lengths differ or are zero.
 * @example mse([100, 100], [101, 101]) // 1
 */
export function mse(a: ArrayLike<number>, b: ArrayLike<number>): number {
  return sse(a, b) / a.length;
}

/** Frobenius norm of the difference, ‖a−b‖_F = sqrt(Σ(aᵢ−bᵢ)²), in the units of the samples (grey levels). */
export function frobeniusError(a: ArrayLike<number>, b: ArrayLike<number>): number {
  return Math.sqrt(sse(a, b));
}

/** PSNR in dB from a mean squared error: 10·log10(MAX²/MSE). Infinity when MSE is 0. */
export function psnrFromMse(meanSquaredError: number, maxValue: number): number {
  checkMaxValue(maxValue);
  if (!(meanSquaredError >= 0))
    throw invalidParameterError('meanSquaredError', 'number ≥ 0', meanSquaredError);
  if (meanSquaredError === 0) return Number.POSITIVE_INFINITY;
  return 10 * Math.log10((maxValue * maxValue) / meanSquaredError);
}

/**
 * PSNR in dB from a sum of squared errors over `count` samples, evaluated as 10·log10(MAX²·count/SSE)
 * (Infinity when SSE is 0). Mathematically {@link psnrFromMse}(SSE/count), but it rounds differently:
 * the compressor's PSNR-budget search compares this form with the target, and its file choices (output
 * bytes) are fixed by it. No argument checks (an inner-loop helper; pass count > 0 and MAX > 0).
 * @example psnrFromSse(256, 256, 255) // 48.1308036086791
 */
export function psnrFromSse(sumSquaredError: number, count: number, maxValue: number): number {
  return sumSquaredError === 0
    ? Number.POSITIVE_INFINITY
    : 10 * Math.log10((maxValue * maxValue * count) / sumSquaredError);
}

/**
 * Peak signal-to-noise ratio in dB, 10·log10(MAX²/MSE), with MAX the largest possible sample value
 * (255 for 8-bit, 65535 for 16-bit). Returns Infinity when the planes are identical.
 * @param maxValue - peak value MAX (data range), > 0.
 * @throws UsageError if the lengths differ or are zero, or maxValue ≤ 0.
 * @example psnr(new Float32Array([100]), new Float32Array([101]), 255) // 48.1308036086791
 */
export function psnr(a: ArrayLike<number>, b: ArrayLike<number>, maxValue: number): number {
  checkMaxValue(maxValue);
  return psnrFromMse(mse(a, b), maxValue);
}

/** PSNR over several channels: the MSE is pooled over all samples of all channels (as skimage does for colour). */
export function psnrPlanes(a: ArrayLike<number>[], b: ArrayLike<number>[], maxValue: number): number {
  checkPlaneLists(a, b);
  let total = 0;
  let count = 0;
  for (let c = 0; c < a.length; c++) {
    total += sse(a[c], b[c]);
    count += a[c].length;
  }
  return psnrFromMse(total / count, maxValue);
}

/** @throws UsageError unless a and b are two non-empty lists of planes of equal length. */
export function checkPlaneLists(a: ArrayLike<number>[], b: ArrayLike<number>[]): void {
  if (a.length !== b.length || a.length === 0)
    throw invalidParameterError(
      'planes',
      `two non-empty lists of equal length (got ${a.length} and ${b.length})`,
      b.length,
    );
}

function checkMaxValue(maxValue: number): void {
  if (!(typeof maxValue === 'number' && Number.isFinite(maxValue) && maxValue > 0))
    throw invalidParameterError('maxValue', 'finite number > 0', maxValue);
}

/**
 * {@link sse} of a plane fed in consecutive pieces (bands of rows): the same blocks of 4096 samples, counted
 * from the start of the plane whatever the piece boundaries, so `total()` equals `sse(a, b)` of the whole
 * plane bit for bit.
 * @example const s = new SseStream(); s.add(a1, b1); s.add(a2, b2); s.total() // sse(a1‖a2, b1‖b2)
 */
export class SseStream {
  private sum = 0;
  private block = 0;
  private inBlock = 0;
  private n = 0;
  private readonly done: number[] | undefined;

  /** @param keepBlocks - also keep each block's sum, for {@link SseStream.blocks}. */
  constructor(keepBlocks = false) {
    this.done = keepBlocks ? [] : undefined;
  }

  /** Add the next `len` samples of both planes (a[aOff…], b[bOff…]); default the whole of `a`. */
  add(a: ArrayLike<number>, b: ArrayLike<number>, aOff = 0, bOff = 0, len = a.length - aOff): void {
    let i = 0;
    while (i < len) {
      const take = Math.min(len - i, 4096 - this.inBlock);
      let block = this.block;
      for (let k = 0; k < take; k++) {
        const d = a[aOff + i + k] - b[bOff + i + k];
        block += d * d;
      }
      i += take;
      this.inBlock += take;
      if (this.inBlock === 4096) {
        this.sum += block;
        this.done?.push(block);
        this.block = 0;
        this.inBlock = 0;
      } else this.block = block;
    }
    this.n += len;
  }

  /** Samples added so far. */
  get count(): number {
    return this.n;
  }

  /** The sums of the 4096-sample blocks so far, the partial last one included (needs keepBlocks). */
  blocks(): number[] {
    if (!this.done) throw new RangeError('SseStream: blocks() needs new SseStream(true)');
    return this.inBlock > 0 ? [...this.done, this.block] : [...this.done];
  }

  /** Σ(aᵢ−bᵢ)² over everything added (the pending partial block included). */
  total(): number {
    return this.inBlock > 0 ? this.sum + this.block : this.sum;
  }
}
