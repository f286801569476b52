/** Public surface of the linear-algebra engine. Pure TypeScript over typed arrays (plus WebAssembly kernels). */
export * from './matrix';
export { jacobiSvd, jacobiSingularValues } from './jacobi-svd';
export { initEngine, setWasmDisabled, wasmActive } from './wasm/runtime';
export { matmul, matmulTransA, matmulTransB } from './products';
export { householderQr, orthonormalize, Orthonormalizer } from './qr';
export {
  randomizedSvd,
  DEFAULT_OVERSAMPLE,
  DEFAULT_POWER_ITERS,
  type RandomizedSvdOptions,
} from './randomized-svd';
export { Rng, DEFAULT_SEED } from './random';
export { type Backend, type Workspace, type Gemm, tsBackend, wasmBackend, defaultBackend, bytesFor } from './workspace';
export { singularValues, fullSvd, JACOBI_LIMIT } from './singular-values';
export { symmetricEigenvalues, tridiagonalEigenvalues } from './symmetric-eigen';
