/**
 * Plane coder of the stack layout. The coder itself (CDF 9/7 wavelet, dead-zone quantiser, context-modelled
 * range coding) lives in ./wavelet-plane, shared with the residual layer of the image layout; this module
 * keeps the stack code's and the benchmarks' imports working.
 */
export {
  decodePlane,
  encodePlane,
  forwardWavelet,
  forwardWaveletReference,
  inverseWavelet,
} from './wavelet-plane';
