/**
 * The engine's seeded pseudo-random numbers, identical on every platform for a given seed:
 * - `Rng`, xoshiro128** seeded by SplitMix32 with Box–Muller normals: the Gaussian test matrices of the
 *   randomized and block-Krylov SVDs (and the test helpers);
 * - `lcg32`, the Numerical Recipes 32-bit linear congruential generator: the fixed Lanczos start vector of
 *   the patch-group denoiser (lanczos.ts) and the cleaning tests' noise. Kept beside `Rng` rather than
 *   replaced by it because `rankfold clean`'s output bytes are fixed by its sequence.
 *
 * References
 * - D. Blackman, S. Vigna, "Scrambled linear pseudorandom number generators", ACM Trans. Math. Softw.
 *   47(4), article 36, 2021. doi:10.1145/3460772. xoshiro128** (DOI from memory).
 * - G. Steele, D. Lea, C. Flood, "Fast splittable pseudorandom number generators", OOPSLA 2014.
 *   doi:10.1145/2660193.2660195 (from memory). SplitMix, used here (32-bit variant) only to spread the seed.
 * - G. E. P. Box, M. E. Muller, "A note on the generation of random normal deviates", Ann. Math. Statist.
 *   29(2):610–611, 1958. doi:10.1214/aoms/1177706645.
 * - W. H. Press, S. A. Teukolsky, W. T. Vetterling, B. P. Flannery, "Numerical Recipes in C", 2nd ed.,
 *   Cambridge 1992, §7.1 "An even quicker generator": I_{j+1} = 1664525·I_j + 1013904223 mod 2³² (from memory).
 */
import type { FloatArray } from './matrix';

/** Default seed when the caller gives none: outputs are deterministic unless a seed is chosen. */
export const DEFAULT_SEED = 0x5eed;

export class Rng {
  private a: number;
  private b: number;
  private c: number;
  private d: number;
  private spare: number | null = null;
  constructor(seed: number = DEFAULT_SEED) {
    let x = (seed >>> 0) ^ Math.floor(seed / 4294967296);
    const next = () => {
      x = (x + 0x9e3779b9) | 0;
      let z = x;
      z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
      z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
      return (z ^ (z >>> 16)) >>> 0;
    };
    this.a = next();
    this.b = next();
    this.c = next();
    this.d = next() | 1;
  }
  /** Next 32-bit unsigned integer (xoshiro128**). */
  nextU32(): number {
    const r = Math.imul(rotl(Math.imul(this.b, 5), 7), 9) >>> 0;
    const t = this.b << 9;
    this.c ^= this.a;
    this.d ^= this.b;
    this.b ^= this.c;
    this.a ^= this.d;
    this.c ^= t;
    this.d = rotl(this.d, 11);
    return r;
  }
  /** Uniform on (0, 1), 53-bit resolution, never 0. */
  uniform(): number {
    const hi = this.nextU32() >>> 5;
    const lo = this.nextU32() >>> 6;
    return (hi * 67108864 + lo + 0.5) / 9007199254740992;
  }
  /** Standard normal (Box–Muller, both deviates used). */
  normal(): number {
    if (this.spare !== null) {
      const s = this.spare;
      this.spare = null;
      return s;
    }
    const r = Math.sqrt(-2 * Math.log(this.uniform()));
    const t = 2 * Math.PI * this.uniform();
    this.spare = r * Math.sin(t);
    return r * Math.cos(t);
  }
  /** Fill with standard normal deviates. */
  fillNormal(out: FloatArray, start = 0, end = out.length): void {
    for (let i = start; i < end; i++) out[i] = this.normal();
  }
}

function rotl(x: number, k: number): number {
  return (x << k) | (x >>> (32 - k));
}

/**
 * The Numerical Recipes LCG I ← (1664525·I + 1013904223) mod 2³², from I = seed mod 2³². Each call
 * returns the next state, a 32-bit unsigned integer; callers scale it (÷2³²) as they need.
 * @example const next = lcg32(1); next() // 1015568748
 */
export function lcg32(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s;
  };
}
