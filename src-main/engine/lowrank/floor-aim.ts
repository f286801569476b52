/**
 * Aiming the residual-only file of ./residual-first at a PSNR floor: the quantiser step for a transform-domain
 * error, and the ratio of the decoded error (rebuilt, rounded and clamped as the reader writes it) to that
 * transform-domain figure, measured on crops of the scan.
 *
 * The transform-domain figure weights each band's error by its synthesis gain as if the 9/7 pair were
 * orthogonal and ignores rounding, so near a PSNR floor the decoded error is 0.99–1.12 times it on the whole
 * scan (measured, see {@link DECODED_RATIO}). A 512² crop's ratio is a little higher than the whole's (its
 * borders, where the symmetric extension is, are a larger share of it) and follows its own content, so the
 * first encode is aimed by {@link spreadRatio}: five crops spread over the scan, at the whole scan's step.
 */

import { type ExactF32Samples, isExactF32Samples } from '../../contract';
import { giveBackWork } from '../codec/resident-plane';
import {
  type AnalysedPlane,
  analysePlane,
  type CodedCoefficients,
  codedSquaredError,
  estimateSquaredError,
  quantiseAnalysed,
  reconstructCoded,
  releaseAnalysed,
  smallestSafeStep,
  squaredErrorAt,
} from '../codec/wavelet-plane';
import { codeHere, type PlanesCoder, tidy } from './residual-fit';
import type { SideRunner } from './side-jobs';

/**
 * A w×h crop of each plane with its top-left corner at (x0, y0), in `into` (w·h values each) when given, else on a
 * SharedArrayBuffer where the runtime has one: the crops go to jobs of the second thread (./side-jobs), which then
 * read them where they lie instead of a copy made for each job (two copies of 2 MB of fresh pages per 512² crop on
 * the residual-first path).
 */
export function cropPlanes(
  planes: ArrayLike<number>[],
  width: number,
  x0: number,
  y0: number,
  w: number,
  h: number,
  into?: Float64Array[],
): Float64Array[] {
  return planes.map((p, k) => {
    const out =
      into?.[k] ??
      (typeof SharedArrayBuffer === 'function'
        ? new Float64Array(new SharedArrayBuffer(w * h * Float64Array.BYTES_PER_ELEMENT))
        : new Float64Array(w * h));
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) out[y * w + x] = p[(y0 + y) * width + x0 + x];
    return out;
  });
}

/** Each plane's step over the first plane's, so every plane adds the same weighted error per coefficient. */
export const stepScales = (weights: number[]) => weights.map((w) => Math.sqrt(weights[0] / w));

/**
 * Bounds on the decoded-over-transform error ratio. Measured on five 7–9-megapixel grey scans (the single-scan
 * speed scan; camera, moon, page and text Lanczos-3 upscaled with σ 1.5 noise) at floors of 34–46 dB:
 * 1.00–1.16 on the centre crop, 0.99–1.12 on the whole scan; outside these bounds a crop is not trusted that far.
 */
const DECODED_RATIO = { min: 0.9, max: 1.3 } as const;

/** Target weighted squared error of a PSNR floor over `count` samples. */
export function floorSse(db: number, count: number, maxValue: number): number {
  return count * maxValue * maxValue * 10 ** (-db / 10);
}

/**
 * Step d (scaled per plane) whose exact transform-domain weighted error is about `target`: bisection on log d
 * over the sampled error estimate, calibrated by one exact quantisation (no range coding).
 */
export function stepForError(analysed: AnalysedPlane[], weights: number[], target: number): number {
  const scales = stepScales(weights);
  const est = (d: number) =>
    analysed.reduce((s, a, k) => s + weights[k] * estimateSquaredError(a, d * scales[k]), 0);
  // The exact error of each plane quantised at the step, without writing its q (../codec squaredErrorAt).
  const exact = (d: number) =>
    analysed.reduce((s, a, k) => s + weights[k] * squaredErrorAt(a, tidy(d * scales[k])), 0);
  const solve = (t: number) => {
    let lo = Math.log2(1e-3);
    let hi = Math.log2(1e6);
    for (let i = 0; i < 30; i++) {
      const mid = (lo + hi) / 2;
      if (est(2 ** mid) > t) hi = mid;
      else lo = mid;
    }
    return 2 ** lo;
  };
  const d0 = solve(target);
  const e0 = est(d0);
  const ratio = e0 > 0 ? exact(d0) / e0 : 1;
  return solve(target / (ratio > 0 ? ratio : 1));
}

/** Code every plane at step d (scaled per plane): steps, bytes and the exact weighted transform-domain error. */
export function codeAll(
  analysed: AnalysedPlane[],
  weights: number[],
  step: number,
  coder: PlanesCoder = codeHere,
) {
  const scales = stepScales(weights);
  const d = analysed.reduce((m, a, k) => Math.max(m, smallestSafeStep(a) / scales[k]), step);
  const steps = analysed.map((_, k) => tidy(d * scales[k]));
  const coded = coder(analysed, steps);
  const sse = coded.reduce((s, c, k) => s + weights[k] * codedSquaredError(analysed[k], c), 0);
  return {
    steps,
    bytes: coded.map((c) => c.bytes),
    coded,
    sse,
    size: coded.reduce((s, c) => s + c.bytes.length, 0),
  };
}

/**
 * Weighted squared error of coded planes as decoded: grey planes rebuilt, rounded and clamped to integer
 * samples as the reader writes them (../colour roundInto); colour planes rebuilt before the colour transform
 * (their rounding happens in RGB and is left to the decoded check).
 */
function decodedSse(
  src: Float64Array[],
  analysed: AnalysedPlane[],
  coded: Array<Omit<CodedCoefficients, 'bytes'>>,
  weights: number[],
  maxValue: number,
): number {
  const grey = src.length === 1;
  let sse = 0;
  for (let k = 0; k < src.length; k++) {
    // The rebuild is read once here: a resident plane lends its work region rather than a fresh copy.
    const rec = reconstructCoded(analysed[k], coded[k] as CodedCoefficients, true);
    const s = src[k];
    let e = 0;
    for (let i = 0; i < s.length; i++) {
      let v = rec[i];
      if (grey) {
        v = Math.round(v);
        v = v > 0 ? (v > maxValue ? maxValue : v) : 0;
      }
      const d = s[i] - v;
      e += d * d;
    }
    giveBackWork(rec);
    sse += weights[k] * e;
  }
  return sse;
}

const bounded = (r: number) =>
  Number.isFinite(r) ? Math.min(DECODED_RATIO.max, Math.max(DECODED_RATIO.min, r)) : 1;

/** A crop's decoded-over-transform error ratio, of planes already coded (bounded by {@link DECODED_RATIO}). */
export function decodedRatio(
  crop: Float64Array[],
  analysed: AnalysedPlane[],
  coded: CodedCoefficients[],
  weights: number[],
  maxValue: number,
  transformSse: number,
): number {
  return bounded(decodedSse(crop, analysed, coded, weights, maxValue) / transformSse);
}

/** One crop of {@link spreadRatio}, as the side job 'spread-crop' (./side-jobs) takes it. */
export interface SpreadCropArgs {
  /** The whole planes (width×height), or the crop itself (then x0 = y0 = 0 and width×height = w×h). */
  planes: Array<ExactF32Samples | Float64Array>;
  width: number;
  height: number;
  x0: number;
  y0: number;
  w: number;
  h: number;
  weights: number[];
  maxValue: number;
  /** The whole scan's step (scaled per plane by {@link stepScales}). */
  step: number;
}

/**
 * One crop's weighted squared errors at the step, as decoded and in the transform domain ([decoded, transform]);
 * its analysed planes are released afterwards, so the next crop analysed on this thread reuses their memory.
 */
export function spreadCrop(a: SpreadCropArgs): Float64Array {
  const { weights, w, h } = a;
  const scales = stepScales(weights);
  const crop = cropOf(a);
  const analysed = crop.map((p) => analysePlane(p, w, h));
  const coded = analysed.map((an, k) => quantiseAnalysed(an, tidy(a.step * scales[k])));
  const transform = coded.reduce((s, c, k) => s + weights[k] * codedSquaredError(analysed[k], c), 0);
  const decoded = decodedSse(crop, analysed, coded, weights, a.maxValue);
  analysed.forEach(releaseAnalysed);
  return Float64Array.of(decoded, transform);
}

/**
 * The crops {@link spreadCrop} made last on this thread, whose memory the next one reuses: a fresh 512² crop is
 * 2 MB of fresh pages, whose first touch cost more than the copy into it (5 against 0.3 ms per crop, measured).
 */
let spareCrops: Float64Array[] = [];

/** The job's crop: its planes when they are the crop already (f64), else copied into this thread's spare crops. */
function cropOf(a: SpreadCropArgs): Float64Array[] {
  const { planes, w, h } = a;
  const n = w * h;
  if (
    a.x0 === 0 &&
    a.y0 === 0 &&
    a.width === w &&
    planes.every((p) => p instanceof Float64Array && p.length === n)
  )
    return planes as Float64Array[];
  spareCrops = planes.map((_, k) => (spareCrops[k]?.length === n ? spareCrops[k] : new Float64Array(n)));
  return cropPlanes(planes, a.width, a.x0, a.y0, w, h, spareCrops);
}

const isShared = (p: ArrayLike<number>): p is SpreadCropArgs['planes'][number] =>
  (isExactF32Samples(p) || p instanceof Float64Array) &&
  typeof SharedArrayBuffer === 'function' &&
  p.buffer instanceof SharedArrayBuffer;

/**
 * The decoded-over-transform error ratio of five side×side crops (the centre and the centres of the four
 * quadrants, moved inside the scan where it is small), quantised at the whole scan's step `step` (scaled per
 * plane): the sums of their decoded and transform-domain errors. On the 24 cases of ./residual-first
 * RECODE_WORTH it was 0.1–2.5% above the whole scan's ratio (the centre crop's alone: −2.3 to +3.9%).
 * Each crop is a job offered to `run` in order; this thread takes them back from the last one down, computing
 * each the other thread has not started, and the sums are added in crop order, so the ratio is the same
 * whichever thread computed which crop. Planes in shared memory are cropped where the job runs; others are
 * cropped here (a job's arrays are copied to the other thread).
 */
export function spreadRatio(
  planes: ArrayLike<number>[],
  width: number,
  height: number,
  weights: number[],
  maxValue: number,
  step: number,
  side: number,
  run: SideRunner,
): number {
  const w = Math.min(width, side);
  const h = Math.min(height, side);
  const at = (c: number, n: number, s: number) => Math.max(0, Math.min(n - s, Math.round(c - s / 2)));
  const centres: Array<[number, number]> = [[0.5, 0.5]];
  for (const fy of [0.25, 0.75]) for (const fx of [0.25, 0.75]) centres.push([fx, fy]);
  const shared = planes.every(isShared);
  const jobs = centres.map(([fx, fy]) => {
    const x0 = at(fx * width, width, w);
    const y0 = at(fy * height, height, h);
    // Only planes outside shared memory are cropped here (a crop made for shared planes would go unused).
    const where = shared
      ? { planes: planes as SpreadCropArgs['planes'], width, height, x0, y0 }
      : { planes: cropPlanes(planes, width, x0, y0, w, h), width: w, height: h, x0: 0, y0: 0 };
    return run('spread-crop', { ...where, w, h, weights, maxValue, step });
  });
  const errors: Float64Array[] = [];
  for (let c = jobs.length - 1; c >= 0; c--) errors[c] = jobs[c]();
  let decoded = 0;
  let transform = 0;
  for (const e of errors) {
    transform += e[1];
    decoded += e[0];
  }
  return bounded(decoded / transform);
}
