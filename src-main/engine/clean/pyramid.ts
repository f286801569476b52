/**
 * A coarse-scale pass for spatially correlated noise. Noise through a small low-pass kernel (demosaicking,
 * JPEG, a scanner's optics) keeps most of its power at low frequencies, which 6×6 patches see only as a
 * shifted patch mean: the patch-group passes remove the high frequencies and leave most of the low ones
 * (measured on moon.png, binomial 3×3 noise σ 10: the error below about π/4 fell only from 12.6 to 7.7 grey
 * levels², above it from 67.5 to 12.1). One level down a Gaussian pyramid those frequencies sit at twice the
 * angle, where the same passes do see them. So the scan is reduced, denoised there (recursively, while the noise
 * at that level is still correlated), and the low band of the full-size estimate D is replaced by the expanded
 * coarse estimate C: D + EXPAND(C − REDUCE(D)).
 *
 * References
 * - P. J. Burt, E. H. Adelson, "The Laplacian pyramid as a compact image code", IEEE Trans. Commun.
 *   31(4):532–540, 1983: REDUCE and EXPAND with the 5-tap generating kernel, a = 0.375 ([1 4 6 4 1]/16).
 * - M. Lebrun, M. Colom, J.-M. Morel, "Multiscale image blind denoising", IEEE Trans. Image Process.
 *   24(10):3149–3161, 2015, and G. Facciolo, N. Pierazzo, J.-M. Morel, "Conservative scale recomposition for
 *   multiscale denoising", SIAM J. Imaging Sci. 11(3), 2018: denoise each scale of a pyramid and recompose the
 *   low frequencies from the coarse results (from memory; their pyramid and recomposition differ in detail).
 *
 * The noise model of every coarse level is predicted from the one measured at full size, not measured again:
 * REDUCE is a known linear filter, so the coarse autocovariance is r_c(Δ) = Σ_t A(ty)·A(tx)·r(2Δ + t), with A
 * the autocorrelation of the kernel (r taken as 0 beyond the measured lags, as everywhere in noise-psd.ts). A
 * measurement on a small coarse image would read texture as noise (text.png lost 2.8 dB that way).
 *
 * Pure: no Node, no I/O. Every level is denoised by the same band code as the full size (denoiseBand), so the
 * levels can share the workers (level-jobs.ts) and the result is bit-identical for any worker count.
 */
import type { NoisePsd } from './noise-psd';
import { psdFromAutocov } from './noise-psd';
import { patchSpectrum } from './noise-psd-plan';
import { autoGroupParams, type BandJob } from './patch-groups';

/** The generating kernel of Burt & Adelson with a = 0.375. */
const KERNEL = [1 / 16, 4 / 16, 6 / 16, 4 / 16, 1 / 16];
/** Its autocorrelation Σₐ w(a)·w(a + t), t = −4 … 4: [1 8 28 56 70 56 28 8 1]/256. */
const KERNEL_AC = [1, 8, 28, 56, 70, 56, 28, 8, 1].map((v) => v / 256);
/**
 * Coarse levels below the full size at most (chosen here: 1 → 2 took moon.png, binomial σ 10, from +7.29 to
 * +7.76 dB; a third, where the size allows, added at most 0.12 dB on moon.png and gel-scan.tif but cost an
 * image outside the bench, skimage's cell.png with binomial σ 5, 0.39 dB).
 */
const MAX_LEVELS = 2;
/** A level smaller than this on either side is not made (too few patches to group; chosen here). */
const MIN_SIDE = 48;

/** Mirror an index into [0, n) (whole-sample symmetric, as Burt & Adelson's edge rule). */
const mirror = (i: number, n: number) => (i < 0 ? -i : i >= n ? 2 * n - 2 - i : i);

/**
 * One axis of REDUCE (up = false: 5-tap low-pass, every second sample kept) or EXPAND (up = true: zeros
 * between the samples, 2·kernel), line by line: `lines` lines of nIn samples (step inStep, lines inLine apart)
 * to nOut samples (step outStep, lines outLine apart).
 */
function axisPass(
  src: Float32Array,
  dst: Float32Array,
  lines: number,
  [nIn, inStep, inLine]: [number, number, number],
  [nOut, outStep, outLine]: [number, number, number],
  up: boolean,
): Float32Array {
  for (let l = 0; l < lines; l++)
    for (let i = 0; i < nOut; i++) {
      let s = 0;
      for (let k = -2; k <= 2; k++) {
        if (!up) s += KERNEL[k + 2] * src[l * inLine + mirror(2 * i + k, nIn) * inStep];
        else {
          const m = mirror(i + k, nOut);
          if ((m & 1) === 0) s += 2 * KERNEL[k + 2] * src[l * inLine + (m >> 1) * inStep];
        }
      }
      dst[l * outLine + i * outStep] = s;
    }
  return dst;
}

/** REDUCE: low-pass with the 5-tap kernel along both axes and keep every second sample (⌈w/2⌉ × ⌈h/2⌉). */
export function reduce(
  plane: Float32Array,
  width: number,
  height: number,
): { plane: Float32Array; width: number; height: number } {
  const w2 = (width + 1) >> 1;
  const h2 = (height + 1) >> 1;
  const rows = axisPass(plane, new Float32Array(w2 * height), height, [width, 1, width], [w2, 1, w2], false);
  const out = axisPass(rows, new Float32Array(w2 * h2), w2, [height, w2, 1], [h2, w2, 1], false);
  return { plane: out, width: w2, height: h2 };
}

/** EXPAND: the coarse plane (⌈w/2⌉ × ⌈h/2⌉) interpolated to width × height (zeros between, 2·kernel per axis). */
export function expand(coarse: Float32Array, width: number, height: number): Float32Array {
  const w2 = (width + 1) >> 1;
  const h2 = (height + 1) >> 1;
  const rows = axisPass(coarse, new Float32Array(width * h2), h2, [w2, 1, w2], [width, 1, width], true);
  return axisPass(rows, new Float32Array(width * height), width, [h2, width, 1], [height, width, 1], true);
}

/** The noise model one level down: the autocovariance of REDUCE applied to noise with autocovariance psd. */
export function reducedPsd(psd: NoisePsd): NoisePsd {
  const L = psd.lag;
  const side = 2 * L + 1;
  const at = (dy: number, dx: number) =>
    Math.abs(dy) > L || Math.abs(dx) > L ? 0 : psd.autocov[(dy + L) * side + dx + L];
  const out = new Float64Array(side * side);
  for (let dy = -L; dy <= L; dy++)
    for (let dx = -L; dx <= L; dx++) {
      let s = 0;
      for (let ty = -4; ty <= 4; ty++)
        for (let tx = -4; tx <= 4; tx++)
          s += KERNEL_AC[ty + 4] * KERNEL_AC[tx + 4] * at(2 * dy + ty, 2 * dx + tx);
      out[(dy + L) * side + dx + L] = s;
    }
  return psdFromAutocov(out, L, psd.blocks);
}

/** What the coarse pass needs: the planes to denoise (plane 0 guides), their σ at full size, the full-size model. */
export interface CoarseJob {
  planes: Float32Array[];
  width: number;
  height: number;
  sigmas: number[];
  /** Noise autocovariance of plane 0 at full size (the other planes are taken to share its shape). */
  psd: NoisePsd;
  maxValue: number;
}

/** One level to denoise: its planes (plane 0 guides), σ per plane and the patch-group parameters. */
export type DenoiseLevel = Omit<BandJob, 'rowStart' | 'rowEnd'>;

/**
 * The coarse levels below the full size (level 1 at ⌈w/2⌉ × ⌈h/2⌉, level 2 below it, …), each the REDUCE of
 * the one above with its own predicted noise model, made while the noise one level up is still correlated;
 * none when the full-size noise is not correlated or the image is too small for a level. Every level is
 * denoised on its own (any thread, any row bands: denoiseBand), then recomposeLevels joins them.
 */
export function coarseLevels(job: CoarseJob): DenoiseLevel[] {
  const out: DenoiseLevel[] = [];
  let { planes, width, height, sigmas, psd } = job;
  if (!psd.correlated) return out;
  while (out.length < MAX_LEVELS) {
    const w2 = (width + 1) >> 1;
    const h2 = (height + 1) >> 1;
    if (w2 < MIN_SIDE || h2 < MIN_SIDE) break;
    const next = reducedPsd(psd);
    const k = next.sigma / psd.sigma;
    sigmas = sigmas.map((v) => v * k);
    planes = planes.map((p) => reduce(p, width, height).plane);
    const auto = autoGroupParams((sigmas[0] * 255) / job.maxValue);
    const spectrum = patchSpectrum(next, auto.patch);
    const params = { ...auto, ...(spectrum ? { noiseSpectrum: spectrum } : {}) };
    out.push({ planes, width: w2, height: h2, sigmas, params });
    [width, height, psd] = [w2, h2, next];
    if (!psd.correlated) break;
  }
  return out;
}

/** D + EXPAND(C − REDUCE(D)) for each plane: the low band of D replaced by the coarse estimate C. */
function recompose(
  fine: Float32Array[],
  coarse: Float32Array[],
  width: number,
  height: number,
): Float32Array[] {
  return fine.map((d, c) => {
    const r = reduce(d, width, height).plane;
    const diff = new Float32Array(r.length);
    for (let i = 0; i < r.length; i++) diff[i] = coarse[c][i] - r[i];
    const up = expand(diff, width, height);
    const out = new Float32Array(d.length);
    for (let i = 0; i < d.length; i++) out[i] = d[i] + up[i];
    return out;
  });
}

/**
 * The full-size estimate (width × height) with the low band of each level replaced by the level below, from
 * the coarsest up: `denoised[l]` is the estimate of `levels[l]` (same plane order as `fine`).
 */
export function recomposeLevels(
  fine: Float32Array[],
  width: number,
  height: number,
  levels: DenoiseLevel[],
  denoised: Float32Array[][],
): Float32Array[] {
  let below: Float32Array[] | null = null;
  for (let l = levels.length - 1; l >= 0; l--)
    below = below ? recompose(denoised[l], below, levels[l].width, levels[l].height) : denoised[l];
  return below ? recompose(fine, below, width, height) : fine;
}
