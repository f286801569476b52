/**
 * The widening load of a plane arena (./arena.ts) and of its pieces on another thread (../arena-split.ts): samples
 * copied into a thread's scratch as f32 and widened to f64 by the lifting kernel. Apart from ./arena.ts so that
 * both import it without importing each other.
 */
import type { ExactF32Samples } from '../../../contract';
import type { LiftingExports } from './runtime';

/**
 * f64 copies of `samples` at byte `dst` of `memory`, each piece of samples copied first to the `cap` bytes at
 * `stage` (a thread's own scratch) as f32 (exact for integer samples too) and widened from there by the kernel
 * (exact: every f32 is an f64).
 */
export function widenStaged(
  memory: WebAssembly.Memory,
  lift: LiftingExports,
  dst: number,
  samples: ExactF32Samples,
  stage: number,
  cap: number,
): void {
  const per = Math.max(4, (cap >> 2) & ~3);
  const buf = memory.buffer;
  for (let i = 0; i < samples.length; i += per) {
    const m = Math.min(per, samples.length - i);
    new Float32Array(buf, stage, m).set(samples.subarray(i, i + m));
    lift.widen(dst + 8 * i, stage, m);
  }
}
