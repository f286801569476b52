/** Image quality metrics and Eckart–Young bounds. Pure TypeScript over typed arrays. */

export {
  energyRank,
  frobeniusOptimal,
  frobeniusOptimalCurve,
  optimalRankPsnr,
  psnrFromFrobenius,
  rankForPsnr,
  spectralBound,
} from './eckart-young';
export { frobeniusError, mse, psnr, psnrFromMse, psnrFromSse, psnrPlanes, SseStream, sse } from './psnr';
export { SsimStream, ssim, ssimFromRowSums, ssimPlanes, ssimRowSums } from './ssim';
export { readySsimKernel } from './wasm/runtime';
