/**
 * Seeded uniform numbers in [0, 1) for tests: the linear congruential generator with a = 1664525,
 * c = 1013904223, m = 2^32 (Press et al., Numerical Recipes, 2nd ed., §7.1, "quick and dirty" generator, from memory;
 * common practice). Deterministic across platforms, so recorded digests and margins stay reproducible.
 */
export function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}
