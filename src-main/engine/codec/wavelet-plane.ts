/**
 * The wavelet plane coder: codes one real-valued plane at a given quantiser step. Used by the stack layout
 * (eigen-frames, the mean frame, per-frame residuals; ./stack-plane re-exports it) and by the residual
 * layer of the image layout (the original minus the decoded low-rank base; ./image-file).
 *
 * Pipeline: separable biorthogonal CDF 9/7 wavelet (lifting form), uniform dead-zone quantiser with
 * one step per sub-band scaled so that every sub-band costs the same distortion per unit of step in
 * the pixel domain, then context-modelled adaptive binary range coding (the codec's range-coder.ts:
 * zero flags and signs on their own contexts, magnitudes by its unary-then-Exp-Golomb binarisation).
 *
 * References
 * - A. Cohen, I. Daubechies, J.-C. Feauveau, "Biorthogonal bases of compactly supported wavelets",
 *   Comm. Pure Appl. Math. 45(5):485–560, 1992 (the 9/7 filter pair).
 * - I. Daubechies, W. Sweldens, "Factoring wavelet transforms into lifting steps", J. Fourier Anal.
 *   Appl. 4(3):247–269, 1998, §7 (lifting coefficients α, β, γ, δ and scale ζ of the 9/7 pair; the
 *   numerical values below are the commonly published ones, from memory).
 * - S. Mallat, "A theory for multiresolution signal decomposition: the wavelet representation",
 *   IEEE TPAMI 11(7):674–693, 1989 (the dyadic 2-D decomposition).
 * - G. J. Sullivan, "Efficient scalar quantization of exponential and Laplacian random variables",
 *   IEEE Trans. Inf. Theory 42(5):1365–1374, 1996 (dead-zone quantisers for Laplacian sources).
 */
import {
  decodeMagnitude,
  encodeMagnitude,
  IntModel,
  models,
  RangeDecoder,
  RangeEncoder,
} from './range-coder';

const ALPHA = -1.586134342059924;
const BETA = -0.052980118572961;
const GAMMA = 0.882911075530934;
const DELTA = 0.443506852043971;
const ZETA = 1.149604398860241;

/** Smallest side a level may split (below it the filters see mostly boundary extension). */
const MIN_SIDE = 12;
/** Most decomposition levels. */
const MAX_LEVELS = 6;
/** Dead-zone rounding offset: q = sign(c)·⌊|c|/Δ + ρ⌋. 0.5 is plain rounding; less widens the zero bin. */
export const DEAD_ZONE_RHO = 0.38;

/** Number of levels used for a w×h plane. */
export function levelsFor(width: number, height: number): number {
  let l = 0;
  let w = width;
  let h = height;
  while (l < MAX_LEVELS && Math.min(w, h) >= MIN_SIDE) {
    w = (w + 1) >> 1;
    h = (h + 1) >> 1;
    l++;
  }
  return l;
}

/** Forward 1-D 9/7 lifting on x[o], x[o+s], … (n samples); writes lows then highs into tmp, then back. */
function fwd1d(x: Float64Array, o: number, s: number, n: number, tmp: Float64Array): void {
  if (n < 2) return;
  const nL = (n + 1) >> 1;
  const nH = n >> 1;
  const L = tmp;
  const H = tmp.subarray(nL);
  for (let i = 0; i < nL; i++) L[i] = x[o + 2 * i * s];
  for (let i = 0; i < nH; i++) H[i] = x[o + (2 * i + 1) * s];
  const lift = (a: Float64Array, na: number, b: Float64Array, nb: number, c: number, bFromA: boolean) => {
    // bFromA: update b (highs) from neighbours in a (lows): b[i] += c·(a[i] + a[i+1]).
    // otherwise: update a (lows) from b (highs): a[i] += c·(b[i−1] + b[i]). Symmetric extension = clamping.
    if (bFromA) for (let i = 0; i < nb; i++) b[i] += c * (a[i] + a[Math.min(i + 1, na - 1)]);
    else for (let i = 0; i < na; i++) a[i] += c * (b[Math.max(i - 1, 0)] + b[Math.min(i, nb - 1)]);
  };
  lift(L, nL, H, nH, ALPHA, true);
  lift(L, nL, H, nH, BETA, false);
  lift(L, nL, H, nH, GAMMA, true);
  lift(L, nL, H, nH, DELTA, false);
  for (let i = 0; i < nL; i++) x[o + i * s] = L[i] / ZETA;
  for (let i = 0; i < nH; i++) x[o + (nL + i) * s] = H[i] * ZETA;
}

function inv1d(x: Float64Array, o: number, s: number, n: number, tmp: Float64Array): void {
  if (n < 2) return;
  const nL = (n + 1) >> 1;
  const nH = n >> 1;
  const L = tmp;
  const H = tmp.subarray(nL);
  for (let i = 0; i < nL; i++) L[i] = x[o + i * s] * ZETA;
  for (let i = 0; i < nH; i++) H[i] = x[o + (nL + i) * s] / ZETA;
  for (let i = 0; i < nL; i++) L[i] -= DELTA * (H[Math.max(i - 1, 0)] + H[Math.min(i, nH - 1)]);
  for (let i = 0; i < nH; i++) H[i] -= GAMMA * (L[i] + L[Math.min(i + 1, nL - 1)]);
  for (let i = 0; i < nL; i++) L[i] -= BETA * (H[Math.max(i - 1, 0)] + H[Math.min(i, nH - 1)]);
  for (let i = 0; i < nH; i++) H[i] -= ALPHA * (L[i] + L[Math.min(i + 1, nL - 1)]);
  for (let i = 0; i < nL; i++) x[o + 2 * i * s] = L[i];
  for (let i = 0; i < nH; i++) x[o + (2 * i + 1) * s] = H[i];
}

/**
 * Column pass of one level on the top-left w×h region (row stride `width`), done as operations on
 * whole rows so memory is read contiguously. Per sample, the arithmetic and its order are exactly those
 * of {@link fwd1d} on the column, so results are bit-identical to a column-by-column transform.
 */
function fwdCols(x: Float64Array, width: number, w: number, h: number, buf: Float64Array): void {
  if (h < 2) return;
  const nL = (h + 1) >> 1;
  const nH = h >> 1;
  for (let i = 0; i < h; i++) {
    const src = (i & 1 ? nL + (i >> 1) : i >> 1) * w;
    buf.set(x.subarray(i * width, i * width + w), src);
  }
  const L = (i: number) => i * w;
  const H = (i: number) => (nL + i) * w;
  const predict = (c: number) => {
    for (let i = 0; i < nH; i++) {
      const hi = H(i);
      const a = L(i);
      const b = L(Math.min(i + 1, nL - 1));
      for (let k = 0; k < w; k++) buf[hi + k] += c * (buf[a + k] + buf[b + k]);
    }
  };
  const update = (c: number) => {
    for (let i = 0; i < nL; i++) {
      const lo = L(i);
      const a = H(Math.max(i - 1, 0));
      const b = H(Math.min(i, nH - 1));
      for (let k = 0; k < w; k++) buf[lo + k] += c * (buf[a + k] + buf[b + k]);
    }
  };
  predict(ALPHA);
  update(BETA);
  predict(GAMMA);
  update(DELTA);
  for (let i = 0; i < nL; i++) {
    const o = i * width;
    const b = L(i);
    for (let k = 0; k < w; k++) x[o + k] = buf[b + k] / ZETA;
  }
  for (let i = 0; i < nH; i++) {
    const o = (nL + i) * width;
    const b = H(i);
    for (let k = 0; k < w; k++) x[o + k] = buf[b + k] * ZETA;
  }
}

/** Inverse of {@link fwdCols}, bit-identical to {@link inv1d} on every column. */
function invCols(x: Float64Array, width: number, w: number, h: number, buf: Float64Array): void {
  if (h < 2) return;
  const nL = (h + 1) >> 1;
  const nH = h >> 1;
  const L = (i: number) => i * w;
  const H = (i: number) => (nL + i) * w;
  for (let i = 0; i < nL; i++) {
    const o = i * width;
    const b = L(i);
    for (let k = 0; k < w; k++) buf[b + k] = x[o + k] * ZETA;
  }
  for (let i = 0; i < nH; i++) {
    const o = (nL + i) * width;
    const b = H(i);
    for (let k = 0; k < w; k++) buf[b + k] = x[o + k] / ZETA;
  }
  const unupdate = (c: number) => {
    for (let i = 0; i < nL; i++) {
      const lo = L(i);
      const a = H(Math.max(i - 1, 0));
      const b = H(Math.min(i, nH - 1));
      for (let k = 0; k < w; k++) buf[lo + k] -= c * (buf[a + k] + buf[b + k]);
    }
  };
  const unpredict = (c: number) => {
    for (let i = 0; i < nH; i++) {
      const hi = H(i);
      const a = L(i);
      const b = L(Math.min(i + 1, nL - 1));
      for (let k = 0; k < w; k++) buf[hi + k] -= c * (buf[a + k] + buf[b + k]);
    }
  };
  unupdate(DELTA);
  unpredict(GAMMA);
  unupdate(BETA);
  unpredict(ALPHA);
  for (let i = 0; i < h; i++) {
    const src = (i & 1 ? nL + (i >> 1) : i >> 1) * w;
    x.set(buf.subarray(src, src + w), i * width);
  }
}

/** In-place 2-D forward transform (Mallat layout). */
export function forwardWavelet(x: Float64Array, width: number, height: number, levels: number): void {
  const tmp = new Float64Array(Math.max(width, height));
  const buf = new Float64Array(width * height);
  let w = width;
  let h = height;
  for (let l = 0; l < levels; l++) {
    for (let y = 0; y < h; y++) fwd1d(x, y * width, 1, w, tmp);
    fwdCols(x, width, w, h, buf);
    w = (w + 1) >> 1;
    h = (h + 1) >> 1;
  }
}

/** In-place 2-D inverse transform. */
export function inverseWavelet(x: Float64Array, width: number, height: number, levels: number): void {
  const tmp = new Float64Array(Math.max(width, height));
  const buf = new Float64Array(width * height);
  const ws = [width];
  const hs = [height];
  for (let l = 1; l < levels; l++) {
    ws.push((ws[l - 1] + 1) >> 1);
    hs.push((hs[l - 1] + 1) >> 1);
  }
  for (let l = levels - 1; l >= 0; l--) {
    const w = ws[l];
    const h = hs[l];
    invCols(x, width, w, h, buf);
    for (let y = 0; y < h; y++) inv1d(x, y * width, 1, w, tmp);
  }
}

/** Column-by-column reference transforms (used by tests to check the row-wise column pass). */
export function forwardWaveletReference(
  x: Float64Array,
  width: number,
  height: number,
  levels: number,
): void {
  const tmp = new Float64Array(Math.max(width, height));
  let w = width;
  let h = height;
  for (let l = 0; l < levels; l++) {
    for (let y = 0; y < h; y++) fwd1d(x, y * width, 1, w, tmp);
    for (let c = 0; c < w; c++) fwd1d(x, c, width, h, tmp);
    w = (w + 1) >> 1;
    h = (h + 1) >> 1;
  }
}

/** Synthesis energy of one unit coefficient in the 1-D low band after `l` levels, or high band of level l. */
const gainCache = new Map<string, number>();
function gain1d(kind: 'low' | 'high', l: number): number {
  const key = `${kind}${l}`;
  const hit = gainCache.get(key);
  if (hit !== undefined) return hit;
  const n = 1024;
  const x = new Float64Array(n);
  // Band extents in the Mallat layout of a length-1024 signal.
  let lowLen = n;
  for (let i = 0; i < (kind === 'low' ? l : l - 1); i++) lowLen = (lowLen + 1) >> 1;
  const pos = kind === 'low' ? lowLen >> 1 : ((lowLen + 1) >> 1) + (lowLen >> 2);
  x[pos] = 1;
  const tmp = new Float64Array(n);
  const lens = [n];
  for (let i = 1; i < l; i++) lens.push((lens[i - 1] + 1) >> 1);
  for (let i = l - 1; i >= 0; i--) inv1d(x, 0, 1, lens[i], tmp);
  let e = 0;
  for (let i = 0; i < n; i++) e += x[i] * x[i];
  gainCache.set(key, e);
  return e;
}

export interface Band {
  x0: number;
  y0: number;
  w: number;
  h: number;
  /** 0 = LL, 1 = HL (horizontal high), 2 = LH, 3 = HH. */
  orient: number;
  level: number;
  /** Synthesis energy gain (pixel-domain squared error per unit squared coefficient error). */
  gain: number;
}

/** Sub-bands in coding order: LL of the coarsest level, then HL, LH, HH from coarse to fine. */
export function bandsFor(width: number, height: number, levels: number): Band[] {
  const ws = [width];
  const hs = [height];
  for (let l = 1; l <= levels; l++) {
    ws.push((ws[l - 1] + 1) >> 1);
    hs.push((hs[l - 1] + 1) >> 1);
  }
  const bands: Band[] = [];
  const gl = (l: number) => (l === 0 ? 1 : gain1d('low', l));
  bands.push({
    x0: 0,
    y0: 0,
    w: ws[levels],
    h: hs[levels],
    orient: 0,
    level: levels,
    gain: gl(levels) * gl(levels),
  });
  for (let l = levels; l >= 1; l--) {
    const lw = ws[l];
    const lh = hs[l];
    const hw = ws[l - 1] - lw;
    const hh = hs[l - 1] - lh;
    const gh = gain1d('high', l);
    bands.push({ x0: lw, y0: 0, w: hw, h: lh, orient: 1, level: l, gain: gh * gl(l) });
    bands.push({ x0: 0, y0: lh, w: lw, h: hh, orient: 2, level: l, gain: gl(l) * gh });
    bands.push({ x0: lw, y0: lh, w: hw, h: hh, orient: 3, level: l, gain: gh * gh });
  }
  return bands.filter((b) => b.w > 0 && b.h > 0);
}

const ZERO_CTX = 5 * 7 * 3;
const MAG_CTX = 5 * 4;
const SIGN_CTX = 5;

function bandClass(b: Band): number {
  if (b.orient === 0) return 0;
  const fine = b.level === 1 ? 2 : 0;
  return 1 + fine + (b.orient === 3 ? 1 : 0);
}

/** The coefficient of the parent band (same orientation, next coarser level), or 0. */
function parentOf(q: Int32Array, width: number, parent: Band | undefined, x: number, y: number): number {
  if (!parent) return 0;
  const px = Math.min(parent.w - 1, x >> 1);
  const py = Math.min(parent.h - 1, y >> 1);
  return q[(parent.y0 + py) * width + parent.x0 + px];
}

/** Visit every coefficient of every band in coding order, with its contexts. */
function walk(
  q: Int32Array,
  width: number,
  bands: Band[],
  visit: (idx: number, zctx: number, mctx: number, sctx: number, isLL: boolean) => void,
): void {
  const byKey = new Map<string, Band>();
  for (const b of bands) byKey.set(`${b.orient}:${b.level}`, b);
  for (const b of bands) {
    const bc = bandClass(b);
    const parent = b.orient === 0 ? undefined : byKey.get(`${b.orient}:${b.level + 1}`);
    for (let y = 0; y < b.h; y++) {
      const row = (b.y0 + y) * width + b.x0;
      for (let x = 0; x < b.w; x++) {
        const idx = row + x;
        const left = x > 0 ? Math.abs(q[idx - 1]) : 0;
        const up = y > 0 ? Math.abs(q[idx - width]) : 0;
        const ul = x > 0 && y > 0 ? q[idx - width - 1] : 0;
        const ur = y > 0 && x + 1 < b.w ? q[idx - width + 1] : 0;
        const p = Math.abs(parentOf(q, width, parent, x, y));
        const sig =
          2 * (left !== 0 ? 1 : 0) + 2 * (up !== 0 ? 1 : 0) + (ul !== 0 ? 1 : 0) + (ur !== 0 ? 1 : 0);
        const pc = p === 0 ? 0 : p === 1 ? 1 : 2;
        const zctx = (bc * 7 + Math.min(sig, 6)) * 3 + pc;
        const m = left + up + (p > 0 ? 1 : 0);
        const mc = m === 0 ? 0 : m <= 2 ? 1 : m <= 6 ? 2 : 3;
        visit(idx, zctx, bc * 4 + mc, bc, b.orient === 0);
      }
    }
  }
}

/** Per-band quantiser steps for pixel-domain step `step`: Δ_b = step / √gain_b. */
function bandSteps(bands: Band[], step: number): Float64Array {
  return Float64Array.from(bands, (b) => step / Math.sqrt(b.gain));
}

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

/** Forward-transform a plane once, so it can be coded at several steps ({@link codeAnalysed}). */
export function analysePlane(plane: ArrayLike<number>, width: number, height: number): AnalysedPlane {
  const n = width * height;
  const x = Float64Array.from(plane as ArrayLike<number>);
  if (x.length !== n) throw new RangeError(`plane has ${x.length} samples; expected ${width}×${height}`);
  const levels = levelsFor(width, height);
  forwardWavelet(x, width, height, levels);
  const bands = bandsFor(width, height, levels);
  return { width, height, levels, bands, map: bandIndexMap(width, height, bands), coeffs: x };
}

/** The quantised coefficients and their range-coded bytes at one step (no reconstruction). */
export interface CodedCoefficients {
  bytes: Uint8Array;
  q: Int32Array;
  steps: Float64Array;
  nonZero: number;
}

/** Quantise and range-code an analysed plane at pixel-domain step `step` (> 0). */
export function codeAnalysed(a: AnalysedPlane, step: number): CodedCoefficients {
  if (!(step > 0) || !Number.isFinite(step))
    throw new RangeError(`plane quantiser step must be > 0, got ${step}`);
  const { width, bands, map, coeffs: x } = a;
  const n = x.length;
  const steps = bandSteps(bands, step);
  const q = new Int32Array(n);
  let nonZero = 0;
  for (let i = 0; i < n; i++) {
    const bi = map[i];
    const rho = bands[bi].orient === 0 ? 0.5 : DEAD_ZONE_RHO;
    const m = Math.floor(Math.abs(x[i]) / steps[bi] + rho);
    q[i] = x[i] < 0 ? -m : m;
    if (m) nonZero++;
  }
  const enc = new RangeEncoder();
  const zm = models(ZERO_CTX);
  const mm = new IntModel(MAG_CTX);
  const sm = models(SIGN_CTX);
  // One leading flag: an all-zero plane costs a few bytes.
  enc.encodeDirect(nonZero ? 1 : 0);
  if (nonZero)
    walk(q, width, bands, (idx, zctx, mctx, sctx) => {
      const v = q[idx];
      enc.encodeBit(zm[zctx], v === 0 ? 0 : 1);
      if (v !== 0) {
        enc.encodeBit(sm[sctx], v < 0 ? 1 : 0);
        encodeMagnitude(enc, mm, Math.abs(v) - 1, mctx);
      }
    });
  return { bytes: enc.finish(), q, steps, nonZero };
}

/** The plane exactly as the decoder rebuilds it from {@link codeAnalysed}'s coefficients. */
export function reconstructCoded(a: AnalysedPlane, c: CodedCoefficients): Float64Array {
  return dequantise(c.q, a.width, a.height, a.levels, c.steps, a.map);
}

/**
 * Code a plane at pixel-domain quantiser step `step` (> 0). The decoder needs width, height and step.
 * @example const { bytes, decoded } = encodePlane(plane, 256, 256, 2.5);
 */
export function encodePlane(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  step: number,
): PlaneCode {
  if (!(step > 0) || !Number.isFinite(step))
    throw new RangeError(`plane quantiser step must be > 0, got ${step}`);
  const a = analysePlane(plane, width, height);
  const c = codeAnalysed(a, step);
  // The range coder is lossless, so the decoder recovers q exactly; rebuild from q by the same routine.
  return { bytes: c.bytes, decoded: reconstructCoded(a, c), nonZero: c.nonZero };
}

/**
 * Rebuild a plane coded by {@link encodePlane}.
 * @throws RangeError if the bytes run out or are not all used (the caller turns this into a FormatError
 * naming the file).
 */
export function decodePlane(bytes: Uint8Array, width: number, height: number, step: number): Float64Array {
  const n = width * height;
  const levels = levelsFor(width, height);
  const bands = bandsFor(width, height, levels);
  const steps = bandSteps(bands, step);
  const map = bandIndexMap(width, height, bands);
  const q = new Int32Array(n);
  const dec = new RangeDecoder(bytes);
  const zm = models(ZERO_CTX);
  const mm = new IntModel(MAG_CTX);
  const sm = models(SIGN_CTX);
  if (dec.decodeDirect() === 0) {
    dec.checkEnd('plane data');
    return new Float64Array(n);
  }
  walk(q, width, bands, (idx, zctx, mctx, sctx) => {
    if (dec.decodeBit(zm[zctx]) === 0) return;
    const neg = dec.decodeBit(sm[sctx]);
    const a = decodeMagnitude(dec, mm, mctx) + 1;
    q[idx] = neg ? -a : a;
  });
  // Exactly to the end of the coder's flush: fewer or more bytes mean damage or a header that does not fit.
  dec.checkEnd('plane data');
  return dequantise(q, width, height, levels, steps, map);
}

/** Reconstruction x̂ = q·Δ_b, then the inverse transform (shared by encoder and decoder). */
function dequantise(
  q: Int32Array,
  width: number,
  height: number,
  levels: number,
  steps: Float64Array,
  map: Uint8Array,
): Float64Array {
  const x = new Float64Array(width * height);
  for (let i = 0; i < x.length; i++) x[i] = q[i] * steps[map[i]];
  inverseWavelet(x, width, height, levels);
  return x;
}

/** Coefficients the rate model looks at: every RATE_STRIDE-th (a prime, so no band or row pattern aliases). */
const RATE_STRIDE = 7;
const RATE_CAP = 16;

/** Per band, the sorted magnitudes of a deterministic 1-in-RATE_STRIDE sample (built once per plane). */
const sampleCache = new WeakMap<AnalysedPlane, Float64Array[]>();
function sortedSample(a: AnalysedPlane): Float64Array[] {
  const hit = sampleCache.get(a);
  if (hit) return hit;
  const lists: number[][] = a.bands.map(() => []);
  for (let i = 0; i < a.coeffs.length; i += RATE_STRIDE) lists[a.map[i]].push(Math.abs(a.coeffs[i]));
  const out = lists.map((l) => Float64Array.from(l).sort());
  sampleCache.set(a, out);
  return out;
}

/** Index of the first value ≥ t in a sorted array. */
function lowerBound(v: Float64Array, t: number): number {
  let lo = 0;
  let hi = v.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (v[mid] < t) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * A quick estimate of {@link codeAnalysed}'s size in bits at step `step`, for rate control: the zeroth-order
 * entropy of each band's quantised magnitudes (0…15, then an Exp-Golomb escape) plus one bit per sign, on a
 * deterministic 1-in-7 sample of the coefficients (sorted once per plane, so a step costs a few binary
 * searches per band). The range coder's contexts do better than this, so callers calibrate it with the ratio
 * of a real encode to the estimate (common practice; see {@link codeAnalysed} for the real coder).
 */
export function estimateBits(a: AnalysedPlane, step: number): number {
  const { bands } = a;
  const steps = bandSteps(bands, step);
  const sample = sortedSample(a);
  let bits = 0;
  const atLeast = new Float64Array(RATE_CAP + 2);
  for (let b = 0; b < bands.length; b++) {
    const v = sample[b];
    const n = v.length;
    if (!n) continue;
    const rho = bands[b].orient === 0 ? 0.5 : DEAD_ZONE_RHO;
    // atLeast[m] = how many sampled magnitudes quantise to ≥ m: |x|/Δ_b + ρ ≥ m ⇔ |x| ≥ (m − ρ)·Δ_b.
    atLeast[0] = n;
    for (let m = 1; m <= RATE_CAP; m++) atLeast[m] = n - lowerBound(v, (m - rho) * steps[b]);
    bits += atLeast[1]; // signs
    for (let m = 0; m <= RATE_CAP; m++) {
      const c = m < RATE_CAP ? atLeast[m] - atLeast[m + 1] : atLeast[RATE_CAP];
      if (c > 0) bits -= c * Math.log2(c / n);
    }
    for (let i = n - atLeast[RATE_CAP]; i < n; i++) {
      const m = Math.floor(v[i] / steps[b] + rho);
      bits += 2 * Math.log2(Math.max(1, m - RATE_CAP + 2)) + 1;
    }
  }
  return bits * RATE_STRIDE + 8;
}

/**
 * Pixel-domain squared error of coded coefficients, estimated in the transform domain: Σ_b g_b·Σ(c − q·Δ_b)²
 * with g_b the band's synthesis energy. The 9/7 pair is nearly orthogonal, so this is close to (not exactly)
 * the squared error of {@link reconstructCoded}'s output (Usevitch, IEEE Signal Process. Mag. 18(5), 2001,
 * on weighting biorthogonal subband errors by synthesis gains; from memory).
 */
export function codedSquaredError(a: AnalysedPlane, c: CodedCoefficients): number {
  const { bands, map, coeffs: x } = a;
  const perBand = new Float64Array(bands.length);
  for (let i = 0; i < x.length; i++) {
    const bi = map[i];
    const d = x[i] - c.q[i] * c.steps[bi];
    perBand[bi] += d * d;
  }
  let e = 0;
  for (let b = 0; b < bands.length; b++) e += bands[b].gain * perBand[b];
  return e;
}
