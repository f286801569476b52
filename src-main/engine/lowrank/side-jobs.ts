/**
 * Work the scan encoder can hand to a second thread, as plain functions of plain data (typed arrays and
 * numbers), so a worker runs exactly the code the calling thread would: the result is the same bit for bit
 * whichever thread computes it. The engine only sees a {@link SideRunner}; src-main/node/parallel/side-thread.ts
 * provides one backed by a worker thread, and {@link runHere} computes on the calling thread.
 */
import type { ExactF32Samples } from '../../contract';
import { type ArenaPassArgs, runArenaPass } from '../codec/arena-split';
import { decodeCoefficientsV2 } from '../codec/coeff-coder';
import { type AnalysedPlane, type CodedCoefficients, codeAnalysed } from '../codec/wavelet-plane';
import { bandsFor, levelsFor } from '../codec/wavelet-transform';
import { readySsimKernel, ssim, ssimRowSums } from '../metrics';
import { type CropBaseArgs, cropBaseError } from './base-estimate';
import { type CropFit, type CropFitArgs, type CropFloorArgs, cropFit, cropFloor } from './crop-fit';
import { type SpreadCropArgs, spreadCrop } from './floor-aim';
import { planeEnergy } from './plane-energy';
import { verifyResidual } from './residual-verify';
import { touchPages } from './ssim-bands';

export interface SideJobs {
  /** SSIM map row sums of window rows from … to − 1, from image rows from … to + 10 of both planes (../metrics). */
  'ssim-rows': {
    args: {
      a: ExactF32Samples | Float64Array;
      b: Float32Array | Float64Array;
      width: number;
      height: number;
      range: number;
      from: number;
      to: number;
    };
    result: Float64Array;
  };
  /** The low-rank base's estimated weighted squared error at `bytes` on crops (./residual-first). */
  'crop-base-sse': {
    args: CropBaseArgs;
    result: number;
  };
  /**
   * One analysed plane (../codec/wavelet-plane analysePlane's fields) quantised and range-coded by coder 2 at
   * pixel-domain step `step` (./residual-first: a colour scan's chroma planes while the calling thread codes Y).
   */
  'code-plane': {
    args: AnalysedPlane & { step: number };
    result: CodedCoefficients;
  };
  /**
   * A residual plane's bytes (coder 2, ../codec/coeff-coder) range-decoded into quantised coefficients (in
   * shared memory, so the answer carries no copy) and reconstruction offsets (./residual-check). With `into`
   * (width·height values on a SharedArrayBuffer, given by the caller to reuse its pages), it is zeroed and
   * the coefficients are decoded there.
   */
  'residual-decode': {
    args: { bytes: Uint8Array; width: number; height: number; into?: Int32Array };
    result: { q: Int32Array; offsets: Float64Array };
  };
  /** One crop's decoded and transform-domain errors at the whole scan's step (./floor-aim spreadRatio). */
  'spread-crop': { args: SpreadCropArgs; result: Float64Array };
  /** The centre crop's residual fitted to its share of a byte budget (./residual-first, ./crop-fit). */
  'crop-fit': { args: CropFitArgs; result: CropFit };
  /** The centre crop coded for a PSNR floor, then the base estimate at its bytes (./crop-fit cropFloor). */
  'crop-floor': { args: CropFloorArgs; result: Float64Array };
  /**
   * A residual plane's bytes range-decoded (in a region of its plane's shared memory when one is lent, else in
   * the coder's own memory) and compared with the coefficients and offsets its encode recorded
   * (./residual-verify): '' when they agree, else what differs (./residual-check words the refusal).
   */
  'residual-verify': {
    args: Parameters<typeof verifyResidual>[0];
    result: string;
  };
  /**
   * A piece of a plane arena's load, 9/7 pass, quantiser, squared error or dequantisation, in the arena's shared
   * memory (../codec/arena-split, ../codec/arena-quant).
   */
  'arena-pass': { args: ArenaPassArgs; result: number };
  /** The energy Σ_k weights[k]·Σ planes[k]² of a scan's planes (./plane-energy). */
  'plane-energy': { args: { planes: ExactF32Samples[]; weights: number[] }; result: number };
  /** One value of every page of each (shared) array written with 0, so later writers take no page faults. */
  'touch-pages': { args: { arrays: Float32Array[] }; result: number };
  /** The SSIM kernel of the thread that runs it made ready for `width`-wide rows (../metrics readySsimKernel). */
  'ssim-ready': { args: { width: number }; result: number };
}
export type SideJobName = keyof SideJobs;

export const SIDE_JOBS: { [K in SideJobName]: (args: SideJobs[K]['args']) => SideJobs[K]['result'] } = {
  'ssim-rows': (a) => ssimRowSums(a.a, a.b, a.width, a.height, a.range, a.from, a.to),
  'crop-base-sse': cropBaseError,
  'code-plane': ({ step, ...a }) => codeAnalysed(a, step, 2),
  'spread-crop': spreadCrop,
  'crop-fit': cropFit,
  'crop-floor': cropFloor,
  'arena-pass': runArenaPass,
  'residual-decode': ({ bytes, width, height, into }) => {
    const n = width * height;
    const q =
      into?.length === n
        ? into.fill(0)
        : typeof SharedArrayBuffer === 'function'
          ? new Int32Array(new SharedArrayBuffer(n * Int32Array.BYTES_PER_ELEMENT))
          : new Int32Array(n);
    const offsets = decodeCoefficientsV2(bytes, q, width, bandsFor(width, height, levelsFor(width, height)));
    return { q, offsets };
  },
  'residual-verify': verifyResidual,
  'plane-energy': ({ planes, weights }) => planeEnergy(planes, weights),
  'touch-pages': touchPages,
  'ssim-ready': ({ width }) => readySsimKernel(width),
};

/**
 * Start a job; the returned function gives its result, waiting for it, or computing it on the calling thread
 * when no other thread has taken it yet. Call it exactly once.
 */
export type SideRunner = <K extends SideJobName>(
  name: K,
  args: SideJobs[K]['args'],
) => SideJoin<SideJobs[K]['result']>;

/**
 * Where a started job is, before it is joined: 'offered' (no thread has started it: joining computes it on the
 * calling thread), 'running' on the other thread (joining waits), or 'answered' (joining only reads the answer).
 */
export type SideJobState = 'offered' | 'running' | 'answered';

/** A started job's join; `state` (when the runner can tell) says, without waiting, what joining it would do. */
export type SideJoin<T> = (() => T) & { state?: () => SideJobState };

/** Every job on the calling thread, at once (one thread: the work is done in the order it is asked for). */
export const runHere: SideRunner = (name, args) => {
  const r = SIDE_JOBS[name](args);
  return () => r;
};

/** SSIM window radius of ../metrics's defaults (11×11 window). */
const SSIM_RADIUS = 5;

/** Pieces each plane's window rows are cut into for {@link ssimPlanesSplit}; each re-filters 2·radius rows. */
const SSIM_PIECES = 8;

/**
 * ssimPlanes of ../metrics, each plane's window rows cut into up to SSIM_PIECES pieces, all offered to `run`
 * in row order (plane by plane); this thread first does `alongside` (its own other work), then takes the
 * pieces back from the last one down, computing each the other thread has not started, and waits for the
 * rest. The two threads meet wherever the other one got to, so neither waits for a fixed half the other
 * finishes late. Each plane's row sums are added in row order, so the value equals ssimPlanes bit for bit
 * whichever thread computed which piece (Wang et al. 2004, the defaults of ../metrics/ssim).
 */
export function ssimPlanesSplit(
  run: SideRunner,
  a: ExactF32Samples[],
  b: Float32Array[],
  width: number,
  height: number,
  range: number,
  alongside: () => void = () => {},
): number {
  const wv = width - 2 * SSIM_RADIUS;
  const hv = height - 2 * SSIM_RADIUS;
  if (hv < 2) {
    alongside();
    return a.reduce((s, p, c) => s + ssim(p, b[c], width, height, range), 0) / a.length;
  }
  const pieces = Math.min(SSIM_PIECES, hv);
  const jobs = a.map((p, c) =>
    Array.from({ length: pieces }, (_, k) => {
      const from = Math.floor((k * hv) / pieces);
      const to = Math.floor(((k + 1) * hv) / pieces);
      return run('ssim-rows', {
        a: p.subarray(from * width, (to + 2 * SSIM_RADIUS) * width),
        b: b[c].subarray(from * width, (to + 2 * SSIM_RADIUS) * width),
        width,
        height,
        range,
        from,
        to,
      });
    }),
  );
  alongside();
  // Joined from the last piece down: a piece not yet started is computed here (../../node/parallel).
  const sums: Float64Array[][] = a.map(() => []);
  for (let c = a.length - 1; c >= 0; c--) for (let k = pieces - 1; k >= 0; k--) sums[c][k] = jobs[c][k]();
  let s = 0;
  for (let c = 0; c < a.length; c++) {
    let total = 0;
    for (const piece of sums[c]) for (let i = 0; i < piece.length; i++) total += piece[i];
    s += total / (wv * hv);
  }
  return s / a.length;
}
