/**
 * The residual fit of ./residual-first's centre crop under a byte budget, as a plain function of plain data so
 * that the side job 'crop-fit' (./side-jobs) runs it on the second thread while the calling thread transforms
 * the whole planes; the result is the same bit for bit on either thread.
 */
import { analysePlane, releaseAnalysed } from '../codec/wavelet-plane';
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
