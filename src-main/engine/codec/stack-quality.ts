/**
 * The frames of a stack encode as a reader rebuilds them, and their quality against the source, measured
 * once per chosen file.
 *
 * A frame is rebuilt from the dequantised planes the encoder kept (mean, eigen-frames, the frame's own
 * residual) with the arithmetic of the reader (./stack-codec `openStackPlanes`: `rebuildFrame` of
 * ../stack/frame-svd, then the residual added, then rounding and clamping to the source scale), element by
 * element in the same order, so the samples are bit-identical to a real decode of the file (checked by
 * test/stack/codec.test.ts and test/stack/quality.test.ts) without parsing or range-decoding it again.
 * Frames are rebuilt one at a time into reused buffers: measuring a series holds one decoded frame, not N.
 */
import { psnrFromMse, ssim } from '../metrics';
import type { PreparedStack, StackInput } from './stack-header';

/** The dequantised planes of one coded channel (transform-domain inverses already taken). */
export interface RebuildChannel {
  mean: Float64Array;
  basis: Float64Array[];
  /** Per frame: d_j, then c_j0 … c_j(k−1). */
  coef: Float32Array;
  /** Frame j's dequantised residual plane, or undefined when the file has none for it. */
  residual(j: number): Float64Array | undefined;
}

/**
 * Frame j's coded plane into `out`: (μ̂ + d_j) + Σ_i c_ji·P̂_i (terms with c_ji = 0 skipped) + R̂_j, summed in
 * the reader's order.
 */
function rebuildChannel(ch: RebuildChannel, j: number, out: Float64Array): Float64Array {
  const { mean, basis, coef } = ch;
  const n = mean.length;
  const m = basis.length + 1;
  const d = coef[j * m];
  for (let p = 0; p < n; p++) out[p] = mean[p] + d;
  for (let i = 0; i < basis.length; i++) {
    const c = coef[j * m + 1 + i];
    if (c === 0) continue;
    const b = basis[i];
    for (let p = 0; p < n; p++) out[p] += c * b[p];
  }
  const r = ch.residual(j);
  if (r) for (let p = 0; p < n; p++) out[p] += r[p];
  return out;
}

/** Round and clamp to [0, max] (as ../colour `toSamples`) into `out`. */
function roundGray(x: Float64Array, max: number, out: Float32Array): Float32Array {
  for (let p = 0; p < x.length; p++) {
    const v = Math.round(x[p]);
    out[p] = v < 0 ? 0 : v > max ? max : v;
  }
  return out;
}

/**
 * A function giving decoded frame j on the source scale ([channel] planes). For gray series the returned
 * plane is a reused buffer, overwritten by the next call: copy it to keep it.
 */
export function frameRebuilder(
  prep: PreparedStack,
  channels: RebuildChannel[],
): (j: number) => Float32Array[] {
  const n = prep.input.width * prep.input.height;
  const max = prep.input.bitDepth === 16 ? 65535 : 255;
  const work = channels.map(() => new Float64Array(n));
  if (prep.input.channels === 1) {
    const out = new Float32Array(n);
    return (j) => [roundGray(rebuildChannel(channels[0], j, work[0]), max, out)];
  }
  return (j) => prep.toSource(channels.map((ch, c) => rebuildChannel(ch, j, work[c])));
}

/** Sum of squared differences. */
function sse(a: ArrayLike<number>, b: Float32Array): number {
  let s = 0;
  for (let i = 0; i < b.length; i++) {
    const d = a[i] - b[i];
    s += d * d;
  }
  return s;
}

/** PSNR (dB, pooled over channels) of one decoded frame against source frame j. */
export function framePsnrOf(input: StackInput, j: number, decoded: Float32Array[]): number {
  const max = input.bitDepth === 16 ? 65535 : 255;
  const f = input.frames[j];
  let s = 0;
  for (let c = 0; c < f.planes.length; c++) s += sse(f.planes[c], decoded[c]);
  return psnrFromMse(s / (f.planes.length * input.width * input.height), max);
}

/** SSIM (Wang et al. 2004 via the metrics module; mean over channels) of one decoded frame, NaN below 11×11. */
function frameSsimOf(input: StackInput, j: number, decoded: Float32Array[]): number {
  const max = input.bitDepth === 16 ? 65535 : 255;
  if (input.width < 11 || input.height < 11) return Number.NaN;
  const f = input.frames[j];
  let s = 0;
  for (let c = 0; c < f.planes.length; c++)
    s += ssim(f.planes[c], decoded[c], input.width, input.height, max);
  return s / f.planes.length;
}

/**
 * PSNR of every frame, and SSIM when `withSsim`, each decoded frame rebuilt once and dropped after use.
 * `frames` limits the work to some frames (the others come back NaN), for callers that split a series.
 */
export function measureFrames(
  input: StackInput,
  frameOf: (j: number) => Float32Array[],
  withSsim: boolean,
  frames: Iterable<number> = input.frames.keys(),
): { psnr: number[]; ssim: number[] } {
  const N = input.frames.length;
  const psnr = new Array<number>(N).fill(Number.NaN);
  const ssimOut = withSsim ? new Array<number>(N).fill(Number.NaN) : [];
  for (const j of frames) {
    const d = frameOf(j);
    psnr[j] = framePsnrOf(input, j, d);
    if (withSsim) ssimOut[j] = frameSsimOf(input, j, d);
  }
  return { psnr, ssim: ssimOut };
}
