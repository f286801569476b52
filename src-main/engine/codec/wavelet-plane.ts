/**
 * The wavelet plane coder: codes one real-valued plane at a given quantiser step. Used by the stack layout
 * (eigen-frames, the mean frame, per-frame residuals; ./stack-plane re-exports it) and by the residual
 * layer of the image layout (the original minus the decoded low-rank base; ./image-file).
 *
 * Pipeline: separable biorthogonal CDF 9/7 wavelet (./wavelet-transform), uniform dead-zone quantiser with
 * one step per sub-band scaled so that every sub-band costs the same distortion per unit of step in the
 * pixel domain, then context-modelled adaptive binary range coding of the quantised coefficients by one of
 * two coefficient coders, chosen by the caller and recorded by the container version:
 * - coder 1 (./coeff-coder-v1): the stack layout and the residual layer of container 1.2, frozen;
 * - coder 2 (./coeff-coder): the residual layer of container 1.3 (richer contexts, LL prediction and
 *   per-band reconstruction offsets).
 *
 * Reference: G. J. Sullivan, "Efficient scalar quantization of exponential and Laplacian random variables",
 * IEEE Trans. Inf. Theory 42(5):1365–1374, 1996 (dead-zone quantisers for Laplacian sources).
 */

import { bandSteps, DEAD_ZONE_RHO } from './band-steps';
import { recallCode, rememberCode } from './coded-planes';
import {
  decodeCoefficientsV2,
  encodeCoefficientsV2,
  offsetsFromStats,
  reconstructionOffsetsV2,
} from './coeff-coder';
import { encodeResidentV2 } from './coeff-coder-resident';
import { decodeCoefficientsV1, encodeCoefficientsV1 } from './coeff-coder-v1';
import { bandMaxResident, errorsAtResident } from './resident-bands';
import {
  adoptArena,
  analyseResident,
  binStatsResident,
  quantiseResident,
  releaseResident,
  residentArena,
  residentResult,
} from './resident-plane';
import { quantiseWasm } from './wasm/runtime';
import { codedSquaredError, dequantise } from './wavelet-rebuild';
import { type Band, bandsFor, levelsFor, transformedCopy } from './wavelet-transform';

export { estimateBits, estimateSquaredError, prepareEstimates } from './wavelet-estimate';
export { codedSquaredError } from './wavelet-rebuild';

export {
  forwardWavelet,
  forwardWaveletReference,
  inverseWavelet,
} from './wavelet-transform';

/** Coefficient coder: 1 (stack layout, container 1.2 residuals) or 2 (container 1.3 residuals). */
export type PlaneCoder = 1 | 2;

function bandIndexMap(width: number, height: number, bands: Band[]): Uint8Array {
  const map = new Uint8Array(width * height);
  bands.forEach((b, i) => {
    for (let y = 0; y < b.h; y++) map.fill(i, (b.y0 + y) * width + b.x0, (b.y0 + y) * width + b.x0 + b.w);
  });
  return map;
}

export interface PlaneCode {
  /** Range-coded quantised coefficients. */
  bytes: Uint8Array;
  /** The plane exactly as the decoder will rebuild it. */
  decoded: Float64Array;
  /** Number of non-zero quantised coefficients. */
  nonZero: number;
}

/** A plane after the forward transform: everything that does not depend on the quantiser step. */
export interface AnalysedPlane {
  width: number;
  height: number;
  levels: number;
  bands: Band[];
  map: Uint8Array;
  /** Transform coefficients (Mallat layout). */
  coeffs: Float64Array;
}

/**
 * Forward-transform a plane once, so it can be coded at several steps ({@link codeAnalysed}). `oneRebuild`:
 * the plane is rebuilt only after its encode is decided (./wasm/arena.ts oneRebuild: less memory touched).
 */
export function analysePlane(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  oneRebuild = false,
): AnalysedPlane {
  const n = width * height;
  if (plane.length !== n)
    throw new RangeError(`plane has ${plane.length} samples; expected ${width}×${height}`);
  const levels = levelsFor(width, height);
  const bands = bandsFor(width, height, levels);
  const arena = analyseResident(plane, width, height, levels, oneRebuild);
  if (!arena) {
    const x = transformedCopy(plane, width, height, levels);
    return { width, height, levels, bands, map: bandIndexMap(width, height, bands), coeffs: x };
  }
  // The coefficients stay in the plane's arena (./resident-plane); the band map is built only if asked for.
  let map: Uint8Array | undefined;
  const a: AnalysedPlane = {
    width,
    height,
    levels,
    bands,
    get map() {
      map ??= bandIndexMap(width, height, bands);
      return map;
    },
    get coeffs() {
      if (arena.coefficientsSpent)
        throw new Error('rankfold engine: a plane was read after its coefficients were overwritten');
      return arena.coeffs();
    },
  };
  adoptArena(a, arena);
  return a;
}

/**
 * The caller is done with `a`: the memory holding its coefficients (already touched) goes to the next plane
 * analysed on this thread, which then faults in fewer fresh pages (./resident-plane). Results coded or
 * quantised from `a` stay valid; `a` itself must not be used again (reading its coefficients throws).
 */
export function releaseAnalysed(a: AnalysedPlane): void {
  releaseResident(a);
}

/** The quantised coefficients and their range-coded bytes at one step (no reconstruction). */
export interface CodedCoefficients {
  bytes: Uint8Array;
  q: Int32Array;
  steps: Float64Array;
  nonZero: number;
  /** Coder 2: per band, reconstruction offsets for |q| = 1 and |q| ≥ 2 (units of the band's step). */
  offsets?: Float64Array;
}

function checkStep(step: number): void {
  if (!(step > 0) || !Number.isFinite(step))
    throw new RangeError(`plane quantiser step must be > 0, got ${step}`);
}

/**
 * The largest magnitude t such that every |c| ≤ t quantises to 0 at step d with rounding offset ρ: the
 * quantiser's ⌊|c|/d + ρ⌋ is built from correctly rounded operations, so it never decreases as |c| grows, and
 * one check at t covers every smaller magnitude. Lets the quantiser skip the division for the (many) zeros.
 */
function zeroThreshold(d: number, rho: number): number {
  let t = (1 - rho) * d;
  while (t > 0 && Math.floor(t / d + rho) !== 0) t *= 1 - 2 ** -40;
  return t;
}

const rhoOf = (b: Band) => (b.orient === 0 ? 0.5 : DEAD_ZONE_RHO);

/** The quantiser's parameters per band: step Δ_b, rounding offset ρ and zero threshold. */
function quantiserPar(bands: Band[], steps: Float64Array): (bi: number) => [number, number, number] {
  return (bi) => {
    const rho = rhoOf(bands[bi]);
    return [steps[bi], rho, zeroThreshold(steps[bi], rho)];
  };
}

/**
 * Dead-zone quantisation of an analysed plane at pixel-domain step `step`, band by band (each band's
 * rectangle in raster order, so no per-coefficient band lookup): q = sign(c)·⌊|c|/Δ_b + ρ⌋.
 */
function quantise(a: AnalysedPlane, steps: Float64Array): Omit<CodedCoefficients, 'bytes'> {
  const { width, bands } = a;
  const par = quantiserPar(bands, steps);
  const arena = residentArena(a);
  if (arena) return residentResult(arena, { steps, nonZero: quantiseResident(arena, bands, par) });
  const x = a.coeffs;
  const q = new Int32Array(x.length);
  const fast = quantiseWasm(x, q, width, bands, par);
  if (fast !== null) return { q, steps, nonZero: fast };
  let nonZero = 0;
  for (let bi = 0; bi < bands.length; bi++) {
    const b = bands[bi];
    const rho = rhoOf(b);
    const d = steps[bi];
    const zero = zeroThreshold(d, rho);
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      const end = row + b.w;
      for (let i = row; i < end; i++) {
        const c = x[i];
        const ac = c < 0 ? -c : c;
        if (ac <= zero) continue;
        const m = Math.floor(ac / d + rho);
        if (m) {
          q[i] = c < 0 ? -m : m;
          nonZero++;
        }
      }
    }
  }
  return { q, steps, nonZero };
}

/**
 * The quantised coefficients at pixel-domain step `step` and coder 2's reconstruction offsets, without
 * range coding (for rate control: {@link codedSquaredError} of the result is that of the coded plane).
 */
export function quantiseAnalysed(a: AnalysedPlane, step: number): Omit<CodedCoefficients, 'bytes'> {
  checkStep(step);
  const steps = bandSteps(a.bands, step);
  const out: Omit<CodedCoefficients, 'bytes'> = quantise(a, steps);
  const arena = residentArena(a);
  out.offsets = arena
    ? offsetsFromStats(binStatsResident(arena, a.bands, steps))
    : reconstructionOffsetsV2(out.q, a.coeffs, steps, a.width, a.bands);
  return out;
}

/**
 * {@link codedSquaredError} of {@link quantiseAnalysed}'s result at `step`, the same number bit for bit: on a
 * resident plane without writing q (two passes over the coefficients, ./resident-plane errorsAtResident), for
 * rate control that asks the error at steps it does not code; elsewhere by quantising.
 */
export function squaredErrorAt(a: AnalysedPlane, step: number): number {
  const arena = residentArena(a);
  if (!arena) return codedSquaredError(a, quantiseAnalysed(a, step));
  checkStep(step);
  const steps = bandSteps(a.bands, step);
  const sums = errorsAtResident(arena, a.bands, quantiserPar(a.bands, steps), offsetsFromStats);
  let e = 0;
  for (let bi = 0; bi < a.bands.length; bi++) e += a.bands[bi].gain * sums[bi];
  return e;
}

/**
 * The smallest pixel-domain step at which every quantised coefficient of `a` stays well inside the range
 * coder's magnitude range (2^30; 2^28 here leaves room for rounding). A flat plane under a generous budget
 * would otherwise drive a rate search to steps whose LL magnitudes overflow the coder.
 */
export function smallestSafeStep(a: AnalysedPlane): number {
  const unit = bandSteps(a.bands, 1);
  const arena = residentArena(a);
  const tops = arena && bandMaxResident(arena, a.bands);
  const { bands, width, coeffs } = a;
  // Division by a positive step is monotone, so each band's largest |c|/Δ is its largest |c| over Δ.
  let worst = 0;
  for (let bi = 0; bi < bands.length; bi++) {
    const b = bands[bi];
    let top = tops ? tops[bi] : 0;
    for (let y = 0; y < (tops ? 0 : b.h); y++) {
      const row = (b.y0 + y) * width + b.x0;
      for (let i = row; i < row + b.w; i++) {
        const c = Math.abs(coeffs[i]);
        if (c > top) top = c;
      }
    }
    const m = top / unit[bi];
    if (m > worst) worst = m;
  }
  return worst / 2 ** 28;
}

/** Quantise and range-code an analysed plane at pixel-domain step `step` (> 0) with coder `coder`. */
export function codeAnalysed(a: AnalysedPlane, step: number, coder: PlaneCoder = 1): CodedCoefficients {
  checkStep(step);
  const { width, bands } = a;
  const steps = bandSteps(bands, step);
  const coded = quantise(a, steps) as CodedCoefficients;
  const arena = residentArena(a);
  if (coder === 1) coded.bytes = encodeCoefficientsV1(coded.q, width, bands);
  else {
    // On a resident plane coder 2 reads q and the bin statistics where they are (./resident-plane), while the
    // other thread works out the plane's error and non-zeros at this q (./coded-aside).
    const v2 =
      (arena &&
        encodeResidentV2(arena, bands, binStatsResident(arena, bands, steps), {
          result: coded,
          steps,
          nonZero: coded.nonZero,
        })) ||
      encodeCoefficientsV2(coded.q, a.coeffs, steps, width, bands);
    coded.bytes = v2.bytes;
    coded.offsets = v2.offsets;
  }
  rememberCode({ bytes: coded.bytes, width, height: a.height, step, coder, coded });
  return coded;
}

/**
 * {@link codeAnalysed}'s result `coded` at pixel-domain step `step`, made again from `a`'s coefficients after its
 * quantised values were discarded (./resident-plane discardQ): the quantiser is a function of the coefficients
 * and the steps, so q is the same, and the bytes and offsets are taken over without coding again. Recorded as
 * the newest encode of those bytes (./coded-planes), so a decode of them reads this q.
 */
export function requantised(a: AnalysedPlane, coded: CodedCoefficients, step: number): CodedCoefficients {
  const out = quantise(a, coded.steps) as CodedCoefficients;
  out.bytes = coded.bytes;
  if (coded.offsets) out.offsets = coded.offsets;
  rememberCode({ bytes: out.bytes, width: a.width, height: a.height, step, coder: 2, coded: out });
  return out;
}

/**
 * The plane exactly as the decoder rebuilds it from {@link codeAnalysed}'s coefficients. With `handOut`, a
 * resident plane's rebuild may be its arena's work region itself (no copy; ./resident-plane
 * reconstructResident): the caller gives it back with giveBackWork before the plane is used or released.
 */
export function reconstructCoded(a: AnalysedPlane, c: CodedCoefficients, handOut = false): Float64Array {
  return dequantise(c, a.width, a.height, a.levels, a.bands, handOut);
}

/**
 * Code a plane at pixel-domain quantiser step `step` (> 0). The decoder needs width, height, step and coder.
 * @example const { bytes, decoded } = encodePlane(plane, 256, 256, 2.5);
 */
export function encodePlane(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  step: number,
  coder: PlaneCoder = 1,
): PlaneCode {
  checkStep(step);
  const a = analysePlane(plane, width, height);
  const c = codeAnalysed(a, step, coder);
  // The range coder is lossless, so the decoder recovers q exactly; rebuild from q by the same routine.
  return { bytes: c.bytes, decoded: reconstructCoded(a, c), nonZero: c.nonZero };
}

/**
 * Rebuild a plane coded by {@link encodePlane} with the same coder.
 * @throws RangeError if the bytes run out or are not all used (the caller turns this into a FormatError
 * naming the file).
 */
export function decodePlane(
  bytes: Uint8Array,
  width: number,
  height: number,
  step: number,
  coder: PlaneCoder = 1,
): Float64Array {
  const levels = levelsFor(width, height);
  const bands = bandsFor(width, height, levels);
  // Bytes this process just encoded (./coded-planes): their coefficients are known, skip the range decoder.
  const known = recallCode(bytes, width, height, step, coder);
  // The decoded file is usually the plane's last use: its memory may carry the result (no copy).
  if (known) return dequantise(known, width, height, levels, bands, true);
  const steps = bandSteps(bands, step);
  const q = new Int32Array(width * height);
  if (coder === 1) {
    decodeCoefficientsV1(bytes, q, width, bands);
    return dequantise({ q, steps }, width, height, levels, bands);
  }
  const offsets = decodeCoefficientsV2(bytes, q, width, bands);
  return dequantise({ q, steps, offsets }, width, height, levels, bands);
}
