/**
 * The residual fit of ./residual-first's centre crop under a byte budget, and its coding for a PSNR floor, as
 * plain functions of plain data so that the side jobs 'crop-fit' and 'crop-floor' (./side-jobs) run them on the
 * second thread while the calling thread transforms the whole planes; the result is the same bit for bit on
 * either thread.
 */
import { analysePlane, releaseAnalysed } from '../codec/wavelet-plane';
import { type CropBaseArgs, cropBaseError } from './base-estimate';
import { codeAll, decodedRatio, stepForError } from './floor-aim';
import { fitResidual } from './residual-fit';

export interface CropFitArgs {
  /** The crop of each coded plane, width×height. */
  crop: Float64Array[];
  width: number;
  height: number;
  weights: number[];
  scales: number[];
  /** The crop's share of the byte budget. */
  bytes: number;
  /** The rate model's starting calibration (real bytes over estimated). */
  ratio: number;
}

/** Whether the crop's residual fits the bytes, its weighted squared error there, and the rate model's calibration. */
export interface CropFit {
  fits: boolean;
  sse: number;
  ratio: number;
}

/**
 * The crop fitted to its bytes (../residual-fit fitResidual, at most three real encodes of the crop); its
 * analysed planes are released afterwards, so the next plane analysed on this thread reuses their memory.
 * Cancellation is checked by the caller when it takes the result.
 */
export function cropFit(a: CropFitArgs): CropFit {
  const analysed = a.crop.map((p) => analysePlane(p, a.width, a.height));
  const { fit, ratio } = fitResidual(analysed, a.weights, a.scales, a.bytes, a.ratio, () => {});
  analysed.forEach(releaseAnalysed);
  return { fits: fit !== undefined, sse: fit ? fit.sse : Number.NaN, ratio };
}

/** The centre crop under a PSNR floor: the base estimate's arguments without its bytes, and the crop's target. */
export interface CropFloorArgs extends Omit<CropBaseArgs, 'bytes' | 'crop'> {
  crop: Float64Array[];
  /** The weighted transform-domain squared error to code the crop at (the floor's, a little under). */
  target: number;
}

/**
 * The crop coded at the step whose transform-domain error is about `target` (../floor-aim stepForError), its
 * decoded-over-transform error ratio, then the base layer's estimated error at the bytes that took
 * (./base-estimate cropBaseError): [crop bytes, weighted transform-domain error, ratio, base error]. Its
 * analysed planes are released before the base estimate, as ./residual-first released them.
 */
export function cropFloor(a: CropFloorArgs): Float64Array {
  const { crop, width, height, weights, maxValue, target } = a;
  const analysed = crop.map((p) => analysePlane(p, width, height));
  const c = codeAll(analysed, weights, stepForError(analysed, weights, target));
  const ratio = decodedRatio(crop, analysed, c.coded, weights, maxValue, c.sse);
  analysed.forEach(releaseAnalysed);
  const baseSse = cropBaseError({ ...a, bytes: c.size });
  return Float64Array.of(c.size, c.sse, ratio, baseSse);
}
