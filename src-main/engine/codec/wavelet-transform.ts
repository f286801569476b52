/**
 * The CDF 9/7 wavelet transform of the plane coder (./wavelet-plane): lifting form, in place, Mallat layout,
 * and the sub-band geometry with each band's synthesis energy gain.
 *
 * References
 * - A. Cohen, I. Daubechies, J.-C. Feauveau, "Biorthogonal bases of compactly supported wavelets",
 *   Comm. Pure Appl. Math. 45(5):485–560, 1992 (the 9/7 filter pair).
 * - I. Daubechies, W. Sweldens, "Factoring wavelet transforms into lifting steps", J. Fourier Anal.
 *   Appl. 4(3):247–269, 1998, §7 (lifting coefficients α, β, γ, δ and scale ζ of the 9/7 pair; the
 *   numerical values below are the commonly published ones, from memory).
 * - S. Mallat, "A theory for multiresolution signal decomposition: the wavelet representation",
 *   IEEE TPAMI 11(7):674–693, 1989 (the dyadic 2-D decomposition).
 */

import { waveletWasm } from './wasm/runtime';

const ALPHA = -1.586134342059924;
const BETA = -0.052980118572961;
const GAMMA = 0.882911075530934;
const DELTA = 0.443506852043971;
const ZETA = 1.149604398860241;
/** The coefficients as the WebAssembly kernels take them (./wasm/runtime.ts). */
export const LIFTING: readonly number[] = [ALPHA, BETA, GAMMA, DELTA, ZETA];

/** Smallest side a level may split (below it the filters see mostly boundary extension). */
const MIN_SIDE = 12;
/** Most decomposition levels. */
const MAX_LEVELS = 6;

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

/**
 * One lifting step on the split signal: highs from lows, b[i] += c·(a[i] + a[i+1]), or lows from highs,
 * a[i] += c·(b[i−1] + b[i]); symmetric extension = clamping the neighbour index. The clamped ends are
 * written out, so the loop bodies carry no Math.min/Math.max (same arithmetic, same order, as clamping).
 */
function liftHigh(a: Float64Array, na: number, b: Float64Array, nb: number, c: number): void {
  const last = na - 1;
  for (let i = 0; i < nb; i++) {
    const j = i + 1 < last ? i + 1 : last;
    b[i] += c * (a[i] + a[j]);
  }
}

function liftLow(a: Float64Array, na: number, b: Float64Array, nb: number, c: number): void {
  const last = nb - 1;
  if (na > 0) a[0] += c * (b[0] + b[0 < last ? 0 : last]);
  for (let i = 1; i < na; i++) a[i] += c * (b[i - 1] + b[i < last ? i : last]);
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
  liftHigh(L, nL, H, nH, ALPHA);
  liftLow(L, nL, H, nH, BETA);
  liftHigh(L, nL, H, nH, GAMMA);
  liftLow(L, nL, H, nH, DELTA);
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
  liftLow(L, nL, H, nH, -DELTA);
  liftHigh(L, nL, H, nH, -GAMMA);
  liftLow(L, nL, H, nH, -BETA);
  liftHigh(L, nL, H, nH, -ALPHA);
  for (let i = 0; i < nL; i++) x[o + 2 * i * s] = L[i];
  for (let i = 0; i < nH; i++) x[o + (2 * i + 1) * s] = H[i];
}

/**
 * Columns per strip of the column pass: a strip of h rows × STRIP columns is lifted in a buffer of
 * h·STRIP samples (640 kB for h = 2500), which stays in cache across the four lifting steps, where a
 * whole-plane buffer would be streamed from memory four times.
 */
const STRIP = 32;

/**
 * One lifting step on a strip buffer of `sw` columns holding nL low rows then nH high rows: predict
 * (high rows from low rows, `high` true) or update (low rows from high rows), row[k] += c·(a[k] + b[k]),
 * the neighbour row index clamped (symmetric extension). Per sample, the arithmetic and its order are those
 * of liftHigh/liftLow on the column.
 */
function liftRows(buf: Float64Array, nL: number, nH: number, sw: number, c: number, high: boolean): void {
  const n = high ? nH : nL;
  for (let i = 0; i < n; i++) {
    const row = (high ? nL + i : i) * sw;
    const a = (high ? i : nL + (i > 0 ? i - 1 : 0)) * sw;
    const b = (high ? (i + 1 < nL ? i + 1 : nL - 1) : nL + (i < nH ? i : nH - 1)) * sw;
    for (let k = 0; k < sw; k++) buf[row + k] += c * (buf[a + k] + buf[b + k]);
  }
}

/**
 * Column pass of one level on the top-left w×h region (row stride `width`), in strips of {@link STRIP}
 * columns lifted as whole strip rows, so memory is read contiguously and the strip stays in cache. Per
 * sample, the arithmetic and its order are exactly those of {@link fwd1d} on the column, so results are
 * bit-identical to a column-by-column transform.
 */
function fwdCols(x: Float64Array, width: number, w: number, h: number, buf: Float64Array): void {
  if (h < 2) return;
  const nL = (h + 1) >> 1;
  const nH = h >> 1;
  for (let k0 = 0; k0 < w; k0 += STRIP) {
    const sw = Math.min(STRIP, w - k0);
    for (let i = 0; i < h; i++) {
      const d = (i & 1 ? nL + (i >> 1) : i >> 1) * sw;
      const o = i * width + k0;
      for (let k = 0; k < sw; k++) buf[d + k] = x[o + k];
    }
    liftRows(buf, nL, nH, sw, ALPHA, true);
    liftRows(buf, nL, nH, sw, BETA, false);
    liftRows(buf, nL, nH, sw, GAMMA, true);
    liftRows(buf, nL, nH, sw, DELTA, false);
    for (let i = 0; i < h; i++) {
      const o = i * width + k0;
      const b = i * sw;
      if (i < nL) for (let k = 0; k < sw; k++) x[o + k] = buf[b + k] / ZETA;
      else for (let k = 0; k < sw; k++) x[o + k] = buf[b + k] * ZETA;
    }
  }
}

/**
 * Inverse of {@link fwdCols}, bit-identical to {@link inv1d} on every column (x − c·s equals x + (−c)·s in
 * IEEE arithmetic, so the undo steps add the negated coefficients as inv1d does).
 */
function invCols(x: Float64Array, width: number, w: number, h: number, buf: Float64Array): void {
  if (h < 2) return;
  const nL = (h + 1) >> 1;
  const nH = h >> 1;
  for (let k0 = 0; k0 < w; k0 += STRIP) {
    const sw = Math.min(STRIP, w - k0);
    for (let i = 0; i < h; i++) {
      const o = i * width + k0;
      const b = i * sw;
      if (i < nL) for (let k = 0; k < sw; k++) buf[b + k] = x[o + k] * ZETA;
      else for (let k = 0; k < sw; k++) buf[b + k] = x[o + k] / ZETA;
    }
    liftRows(buf, nL, nH, sw, -DELTA, false);
    liftRows(buf, nL, nH, sw, -GAMMA, true);
    liftRows(buf, nL, nH, sw, -BETA, false);
    liftRows(buf, nL, nH, sw, -ALPHA, true);
    for (let i = 0; i < h; i++) {
      const s = (i & 1 ? nL + (i >> 1) : i >> 1) * sw;
      const o = i * width + k0;
      for (let k = 0; k < sw; k++) x[o + k] = buf[s + k];
    }
  }
}

/**
 * A copy of `plane` (width×height samples) forward-transformed: in the WebAssembly kernels where available,
 * else in TypeScript; the same bits either way.
 */
export function transformedCopy(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  levels: number,
): Float64Array {
  const n = width * height;
  const x = new Float64Array(n);
  if (levels > 0 && waveletWasm(plane, x, width, height, levels, LIFTING, false)) return x;
  // A typed array's set copies without the iterator protocol Float64Array.from would walk.
  if (ArrayBuffer.isView(plane)) x.set(plane as unknown as ArrayLike<number>);
  else for (let i = 0; i < n; i++) x[i] = plane[i];
  forwardWaveletTs(x, width, height, levels);
  return x;
}

/** In-place 2-D forward transform (Mallat layout); in the WebAssembly kernels where available. */
export function forwardWavelet(x: Float64Array, width: number, height: number, levels: number): void {
  if (levels > 0 && waveletWasm(x, x, width, height, levels, LIFTING, false)) return;
  forwardWaveletTs(x, width, height, levels);
}

function forwardWaveletTs(x: Float64Array, width: number, height: number, levels: number): void {
  const tmp = new Float64Array(Math.max(width, height));
  const buf = new Float64Array(height * STRIP);
  let w = width;
  let h = height;
  for (let l = 0; l < levels; l++) {
    for (let y = 0; y < h; y++) fwd1d(x, y * width, 1, w, tmp);
    fwdCols(x, width, w, h, buf);
    w = (w + 1) >> 1;
    h = (h + 1) >> 1;
  }
}

/** In-place 2-D inverse transform; in the WebAssembly kernels where available. */
export function inverseWavelet(x: Float64Array, width: number, height: number, levels: number): void {
  if (levels > 0 && waveletWasm(x, x, width, height, levels, LIFTING, true)) return;
  const tmp = new Float64Array(Math.max(width, height));
  const buf = new Float64Array(height * STRIP);
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

/**
 * {@link synthesisGain1d} of levels 1 … MAX_LEVELS as it computes them, to the last bit (test/codec/band-gains
 * checks them against it): the first plane analysed on a thread then runs none of its cold code (~10 ms of
 * the first analysis on the encoder's critical path).
 */
const KNOWN_GAINS = {
  low: [
    1.7168276953060222, 3.1439708714733503, 5.60576829914329, 9.850415718417125, 17.23206322280989,
    30.109651491904234,
  ],
  high: [
    0.5956918906783631, 0.9672158060329807, 1.8158147793796644, 3.279778437683722, 5.78558176279454,
    10.131509167073292,
  ],
};

/** Synthesis energy of one unit coefficient in the 1-D low band after `l` levels, or high band of level l. */
function gain1d(kind: 'low' | 'high', l: number): number {
  return KNOWN_GAINS[kind][l - 1] ?? synthesisGain1d(kind, l);
}

/** {@link gain1d} worked out: an impulse in the band, synthesised, its energy (remembered). */
const gainCache = new Map<string, number>();
export function synthesisGain1d(kind: 'low' | 'high', l: number): number {
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
