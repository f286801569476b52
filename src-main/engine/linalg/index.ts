/** Public surface of the linear-algebra engine. Pure TypeScript over typed arrays (plus WebAssembly kernels). */

export { adaptiveRandomizedSvd } from './adaptive-svd';
export { solveSpdRidge } from './cholesky';
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
export { lcg32, Rng } from './random';
export { randomizedSvd } from './randomized-svd';
export { fullSvd, JACOBI_LIMIT, singularValues } from './singular-values';
export {
  eigenWorkspace,
  smallGram,
  smallSymmetricEigen,
  smallTridiagonalEigen,
} from './small-symmetric-eigen';
export { symmetricEigenvalues } from './symmetric-eigen';
export { initEngine, setWasmDisabled } from './wasm/runtime';
export {
  type Backend,
  bytesFor,
  defaultBackend,
  type Gemm,
  tsBackend,
  type Workspace,
  wasmBackend,
} from './workspace';
