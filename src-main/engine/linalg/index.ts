/** Public surface of the linear-algebra engine. Pure TypeScript over typed arrays (plus WebAssembly kernels). */
export * from './matrix';
export { jacobiSvd } from './jacobi-svd';
