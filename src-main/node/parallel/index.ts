/** Worker-thread linear algebra for large planes (Node only). */

export { planeThreads, prepareFactorPath } from './factor-path';
export {
  closeSharedLinalgPool,
  LinalgPool,
  PARALLEL_MIN_FLOPS,
  type PoolOptions,
  sharedLinalgPool,
} from './pool';
