// Timing helpers shared by the benchmarks (bundled into each dist/bench/*.bench.js by scripts/build.mjs).
import { performance } from 'node:perf_hooks';

/** The median: the middle value, or the mean of the two middle values of an even count. */
export function median(xs: readonly number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
}

/** Median wall time of `reps` calls of `fn` in ms, after one untimed warm-up call (JIT, memory growth) unless `warm` is false. */
export function medianMs(fn: () => void, reps: number, warm = true): number {
  if (warm) fn();
  const ts: number[] = [];
  for (let i = 0; i < reps; i++) {
    const t = performance.now();
    fn();
    ts.push(performance.now() - t);
  }
  return median(ts);
}
