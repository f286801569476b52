// Same kernels, compiled against a shared memory for the worker threads (src-main/node/parallel).
export * from './kernels';
