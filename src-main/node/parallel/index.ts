/** Worker-thread linear algebra for large planes (Node only). */
export {
  closeSharedLinalgPool,
  LinalgPool,
  PARALLEL_MIN_FLOPS,
  type PoolOptions,
  sharedLinalgPool,
} from './pool';
