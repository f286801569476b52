// Runs a computation on the TypeScript reference path and on the WebAssembly kernels (codec and metrics share
// one switch, src-main/engine/metrics/wasm/loader), for the tests that prove the two give identical results.
import { afterEach } from 'vitest';
import { setKernelsDisabled } from '../../src-main/engine/metrics/wasm/loader';

/** Run f with the kernels off (TypeScript reference), then on; both results. */
export function bothPaths<T>(f: () => T): [T, T] {
  setKernelsDisabled(true);
  const ref = f();
  setKernelsDisabled(false);
  return [ref, f()];
}

/** Call at the top of a test file: the kernels are switched back on after every test. */
export function restoreKernelsAfterEach(): void {
  afterEach(() => setKernelsDisabled(false));
}
