/** Public surface of the linear-algebra engine. Pure TypeScript over typed arrays (plus WebAssembly kernels). */

export {
  type AdaptiveSvdOptions,
  type AdaptiveSvdResult,
  adaptiveRandomizedSvd,
  DEFAULT_PROBES,
  HMT_ESTIMATE_FACTOR,
} from './adaptive-svd';
export { choleskyUpper, solveSpdRidge } from './cholesky';
export { householderQr } from './householder-qr';
export { jacobiSingularValues, jacobiSvd } from './jacobi-svd';
export {
  type LanczosArrays,
  lanczosBidiagonalize,
  lanczosGram,
  lanczosStartVector,
  ritzAbove,
} from './lanczos';
export * from './matrix';
export { matmul, matmulTransA, matmulTransB } from './products';
export { Orthonormalizer, orthonormalize } from './qr';
export { DEFAULT_SEED, lcg32, Rng } from './random';
export {
  DEFAULT_OVERSAMPLE,
  DEFAULT_POWER_ITERS,
  defaultPowerIters,
  type RandomizedSvdOptions,
  randomizedSvd,
} from './randomized-svd';
export { fullSvd, JACOBI_LIMIT, singularValues } from './singular-values';
export {
  type EigenWorkspace,
  eigenWorkspace,
  smallGram,
  smallSymmetricEigen,
  smallTridiagonalEigen,
} from './small-symmetric-eigen';
export { symmetricEigenvalues, tridiagonalEigenvalues } from './symmetric-eigen';
export { initEngine, setWasmDisabled, wasmActive } from './wasm/runtime';
export {
  type Backend,
  bytesFor,
  defaultBackend,
  type Gemm,
  tsBackend,
  type Workspace,
  wasmBackend,
} from './workspace';
