// Test planes and digests shared by the codec's kernel-identity tests.
import { createHash } from 'node:crypto';
import { setCoderWasmDisabled } from '../../src-main/engine/codec/wasm/coder-runtime';
import { setKernelsDisabled } from '../../src-main/engine/metrics/wasm/loader';
import { lcg } from '../helpers/lcg';

/** SHA-256 of a typed array's bytes. */
export const digest = (x: ArrayBufferView) =>
  createHash('sha256')
    .update(new Uint8Array(x.buffer, x.byteOffset, x.byteLength))
    .digest('hex');

/** A test plane: LCG noise on a ramp with a sharp edge (grey levels 0…255). */
export function rampPlane(w: number, h: number, seed: number): Float32Array {
  const next = lcg(seed);
  const x = new Float32Array(w * h);
  for (let y = 0; y < h; y++)
    for (let i = 0; i < w; i++) x[y * w + i] = (i > w / 3 ? 160 : 40) + y * 0.3 + next() * 30;
  return x;
}

/** `f` run on the TypeScript reference: the WebAssembly kernels and the coder port off. */
export function reference<T>(f: () => T): T {
  setKernelsDisabled(true);
  setCoderWasmDisabled(true);
  try {
    return f();
  } finally {
    setKernelsDisabled(false);
    setCoderWasmDisabled(false);
  }
}
