/**
 * The plane coder's reconstruction and its transform-domain error (./wavelet-plane re-exports
 * {@link codedSquaredError}): quantised coefficients rebuilt inside their bins and inverse-transformed, by the
 * kernels on a resident plane (./resident-plane), else by the shared kernels or the TypeScript here.
 */
import { errorsBeside } from './coded-aside';
import { bandErrorsResident } from './resident-bands';
import { reconstructResident, residentArena, residentQ } from './resident-plane';
import { reconstructWasm } from './wasm/runtime';
import type { AnalysedPlane } from './wavelet-plane';
import { type Band, inverseWavelet, LIFTING } from './wavelet-transform';

/** Quantised coefficients with what rebuilds them: per band step and (coder 2) reconstruction offsets. */
interface Quantised {
  q: Int32Array;
  steps: Float64Array;
  offsets?: Float64Array;
}

/** Per band: step Δ and the offsets d1 (|q| = 1) and d2 (|q| ≥ 2), 0 without offsets. */
function parOf(c: Quantised): (bi: number) => [number, number, number] {
  const { steps, offsets } = c;
  return (bi) => (offsets ? [steps[bi], offsets[2 * bi], offsets[2 * bi + 1]] : [steps[bi], 0, 0]);
}

/**
 * Reconstruction ({@link dequantiseInto}), then the inverse transform (shared by encoder and decoder). With
 * `handOut`, a resident plane's last rebuild may be returned in its own memory (./resident-plane).
 */
export function dequantise(
  c: Quantised,
  width: number,
  height: number,
  levels: number,
  bands: Band[],
  handOut = false,
): Float64Array {
  const par = parOf(c);
  const arena = residentQ(c);
  const resident =
    arena && arena.width === width && arena.height === height
      ? reconstructResident(arena, bands, (bi) => [...par(bi), 0], levels, handOut)
      : undefined;
  if (resident) return resident;
  const fast = reconstructWasm(c.q, width, height, levels, bands, par, LIFTING);
  if (fast) return fast;
  const x = new Float64Array(width * height);
  dequantiseInto(c, bands, width, x);
  inverseWavelet(x, width, height, levels);
  return x;
}

/**
 * x[i] = sign(q)·(|q| + δ)·Δ_b for every coefficient i of band b (δ = 0 for coder 1, zeros stay 0), computed
 * as (q ± δ)·Δ_b, or q·Δ_b without offsets.
 */
function dequantiseInto(c: Quantised, bands: Band[], width: number, x: Float64Array): void {
  const { q, steps, offsets } = c;
  for (let bi = 0; bi < bands.length; bi++) {
    const b = bands[bi];
    const step = steps[bi];
    const d1 = offsets ? offsets[2 * bi] : 0;
    const d2 = offsets ? offsets[2 * bi + 1] : 0;
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      const end = row + b.w;
      for (let i = row; i < end; i++) {
        const v = q[i];
        if (v !== 0) x[i] = rebuilt(v, step, d1, d2);
      }
    }
  }
}

/**
 * (v ± δ)·Δ with δ = d1 for |v| = 1 and d2 for |v| ≥ 2, for v ≠ 0. Without offsets (δ = 0) this is exactly
 * v·Δ, since v ± 0 = v in floating point.
 */
function rebuilt(v: number, step: number, d1: number, d2: number): number {
  return (v < 0 ? v - (v === -1 ? d1 : d2) : v + (v === 1 ? d1 : d2)) * step;
}

/**
 * Pixel-domain squared error of coded coefficients, estimated in the transform domain: Σ_b g_b·Σ(c − q·Δ_b)²
 * with g_b the band's synthesis energy. The 9/7 pair is nearly orthogonal, so this is close to (not exactly)
 * the squared error of {@link reconstructCoded}'s output (Usevitch, IEEE Signal Process. Mag. 18(5), 2001,
 * on weighting biorthogonal subband errors by synthesis gains; from memory).
 */
export function codedSquaredError(a: AnalysedPlane, c: Quantised): number {
  const par = parOf(c);
  const arena = residentArena(a);
  // Worked out beside c's encode (./coded-aside), from the same q and the same Δ, d1, d2.
  const known = errorsBeside(c);
  const sums =
    known?.length === a.bands.length
      ? known
      : arena && residentQ(c) === arena
        ? bandErrorsResident(arena, a.bands, par)
        : bandErrors(a, c.q, par);
  let e = 0;
  for (let bi = 0; bi < a.bands.length; bi++) e += a.bands[bi].gain * sums[bi];
  return e;
}

/**
 * Per band, Σ(c − rebuilt(q))² (c where q = 0), band by band in raster order, each coefficient rebuilt as
 * dequantiseInto does: every band's sum is formed in the same order as over a whole rebuilt plane, without
 * allocating one.
 */
function bandErrors(
  a: AnalysedPlane,
  q: Int32Array,
  par: (bi: number) => [number, number, number],
): Float64Array {
  const { bands, width, coeffs: x } = a;
  const sums = new Float64Array(bands.length);
  for (let bi = 0; bi < bands.length; bi++) {
    const b = bands[bi];
    const [step, d1, d2] = par(bi);
    let s = 0;
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      const end = row + b.w;
      for (let i = row; i < end; i++) {
        const v = q[i];
        const d = v === 0 ? x[i] : x[i] - rebuilt(v, step, d1, d2);
        s += d * d;
      }
    }
    sums[bi] = s;
  }
  return sums;
}
