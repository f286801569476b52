/**
 * The noise's spatial autocovariance (and so its power spectrum) measured from the flattest blocks of a scan,
 * and the test that decides whether the noise is white or spatially correlated.
 *
 * Method
 * 1. The plane is cut into BLOCK×BLOCK blocks; blocks touching a clip level are skipped. In each, a plane
 *    a + b·y + c·x is fitted by least squares and removed; the residual's variance ranks the blocks.
 * 2. Flat blocks are kept by an iterative rule: start at the 5th percentile v of the residual variances, keep
 *    blocks with variance ≤ KEEP_RATIO·v, set v to their mean, repeat. Under pure noise this converges near the
 *    mean noise variance (only the far upper tail of the noise-only blocks is cut), while textured blocks stay
 *    out. The idea of iterating a weak-texture selection with its own noise estimate follows X. Liu,
 *    M. Tanaka, M. Okutomi, "Single-image noise level estimation for blind denoising", IEEE TIP 22(12):
 *    5226–5237, 2013 (their selection statistic is the gradient covariance; from memory).
 * 3. Over the kept blocks the lag products s(Δ) = Σᵢ eᵢ·eᵢ₊Δ of the residual e are averaged for every lag
 *    |Δy|, |Δx| ≤ PSD_LAG. Removing the plane biases them: E[s(Δ)] = Σ_Δ' K(Δ, Δ')·r(Δ'), with K fixed by the
 *    block size (the projector I − P of the plane fit applied to each lag's pair pattern). Solving that
 *    linear system gives an unbiased autocovariance r (assuming r = 0 beyond PSD_LAG).
 * 4. Flatness F = 1 / Σ_Δ ρ(Δ)², ρ = r/r(0), over the full lag grid. By Parseval Σρ² is the mean of S(ω)² over
 *    the squared mean of S(ω) for the normalised spectrum S, so F = 1 for a flat (white) spectrum and falls as
 *    the spectrum concentrates: 0.26 for white noise through a 3×3 binomial kernel, 0.16 through a 5×5 Gaussian
 *    of σ = 1 (computed from their autocorrelations).
 * 5. A flat block of a textured or noise-free image still holds some smooth signal, which also lowers F (text.png
 *    with white noise of σ = 10 measures F ≈ 0.3). What such signal cannot do is remove noise power from the
 *    high frequencies: white noise keeps its level there. So the second measure is the high-frequency share H:
 *    the mean of the normalised spectrum S(ω)/r(0) over the frequencies of a 16×16 grid (ω = π·k/8) with
 *    max(|ωy|, |ωx|) ≥ 3π/4 (1 for white noise, 0.04 for the binomial kernel and 0.02 for the Gaussian one). The
 *    noise is called correlated when F < WHITE_FLATNESS and H < HIGH_SHARE. On test/fixtures camera, moon,
 *    page, text and phantom with white noise of σ = 2…20, H measured 0.36–1.0; with the two filtered noises
 *    added (σ 5, 10), 0.02–0.10.
 *
 * Pure: no Node, no I/O. The autocovariance is in the plane's units squared (grey levels²).
 */
import { solveSpdRidge } from '../linalg';

/** Side of the flat blocks (pixels): 256 samples each, so a plane fit removes ~1 % of white noise. */
export const BLOCK = 16;
/** Largest lag per axis of the measured autocovariance: covers the DCT of patches up to 8×8. */
export const PSD_LAG = 7;
/** Selection keeps blocks up to this multiple of the current flat-block variance (about 2.7 standard deviations for 40 effective samples). */
const KEEP_RATIO = 1.6;
/** At most this many flat blocks enter the averages (the flattest ones): enough for ±1 % lag estimates. */
const MAX_BLOCKS = 4096;
/** Fewer kept blocks than this: no measurement (the spectrum is not trusted, the noise is taken as white). */
const MIN_BLOCKS = 8;
/**
 * Flatness below which the noise counts as correlated. White noise measures F ≈ 0.8–1 (estimation noise over
 * 224 lags lowers it); one neighbour correlation of 0.5 along one axis alone gives F = 0.67. Chosen here, not
 * from a source, with a wide margin on both sides (filtered noise of the bench: 0.16–0.26).
 */
const WHITE_FLATNESS = 0.45;
/** High-frequency share below which the noise counts as correlated (chosen here; measured ranges in the file comment). */
const HIGH_SHARE = 0.2;

/** The measured noise autocovariance of one plane. */
export interface NoisePsd {
  /** Largest lag per axis (PSD_LAG). */
  lag: number;
  /** r(Δy, Δx) on the full grid, index (Δy + lag)·(2·lag + 1) + Δx + lag; units of the plane, squared. */
  autocov: Float64Array;
  /** √r(0): the noise's standard deviation per pixel. */
  sigma: number;
  /** Flat blocks used. */
  blocks: number;
  /** 1 / Σρ(Δ)² (1 = white). */
  flatness: number;
  /** Mean of the horizontal and vertical lag-one correlations ρ(0, 1), ρ(1, 0). */
  lagOne: number;
  /** Mean normalised spectrum over the high frequencies (1 = white). */
  highShare: number;
  /** flatness < WHITE_FLATNESS and highShare < HIGH_SHARE. */
  correlated: boolean;
  /**
   * Plane-fit residual variance of each flat block used, flattest first (measured spectra only; the test of
   * noise-psd-floor.ts reads it).
   */
  blockVariances?: Float64Array;
  /** Top-left sample index (y·width + x) of each of those blocks, in the same order. */
  blockOrigins?: Int32Array;
}

/** The half-plane of lags (Δy ≥ 0; Δx ≥ 0 when Δy = 0): each ±Δ pair once. */
function halfLags(L: number): Int32Array {
  const out: number[] = [];
  for (let dy = 0; dy <= L; dy++) for (let dx = dy === 0 ? 0 : -L; dx <= L; dx++) out.push(dy, dx);
  return Int32Array.from(out);
}

/** Orthonormal plane basis of a B×B block: constant, y ramp, x ramp (columns of Q, B² × 3, row-major). */
export function planeBasis(B: number): Float64Array {
  const Q = new Float64Array(B * B * 3);
  const c = (B - 1) / 2;
  const ramp = 1 / Math.sqrt((B * B * (B * B - 1)) / 12);
  for (let y = 0; y < B; y++)
    for (let x = 0; x < B; x++) {
      const i = y * B + x;
      Q[i * 3] = 1 / B;
      Q[i * 3 + 1] = (y - c) * ramp;
      Q[i * 3 + 2] = (x - c) * ramp;
    }
  return Q;
}

/** Σᵢ A[i, i+Δ] over the pairs inside the block, for A = F·Gᵀ with F, G of B² × 3 (row-major). */
function shiftedTrace(F: Float64Array, G: Float64Array, B: number, dy: number, dx: number): number {
  let s = 0;
  for (let y = 0; y + dy < B; y++)
    for (let x = Math.max(0, -dx); x < B && x + dx < B; x++) {
      const i = (y * B + x) * 3;
      const j = ((y + dy) * B + x + dx) * 3;
      s += F[i] * G[j] + F[i + 1] * G[j + 1] + F[i + 2] * G[j + 2];
    }
  return s;
}

const biasCache = new Map<string, Float64Array>();

/**
 * K[a, b] = E[s(Δ_a)] per unit of r(Δ_b): Σᵢ [(I − P)·E_b·(I − P)]ᵢ,ᵢ₊Δa with E_b the symmetric pattern of
 * lag ±Δ_b (the identity for Δ_b = 0) and P = Q·Qᵀ the plane projector.
 */
function biasMatrix(B: number, lags: Int32Array): Float64Array {
  const key = `${B}/${lags.length}`;
  const hit = biasCache.get(key);
  if (hit) return hit;
  const n = lags.length / 2;
  const K = new Float64Array(n * n);
  const Q = planeBasis(B);
  const G = new Float64Array(B * B * 3);
  const QH = new Float64Array(B * B * 3);
  for (let b = 0; b < n; b++) {
    const by = lags[2 * b];
    const bx = lags[2 * b + 1];
    // G = E_b·Q.
    G.fill(0);
    for (let y = 0; y < B; y++)
      for (let x = 0; x < B; x++) {
        const i = y * B + x;
        for (const s of by === 0 && bx === 0 ? [1] : [1, -1]) {
          const yy = y + s * by;
          const xx = x + s * bx;
          if (yy < 0 || yy >= B || xx < 0 || xx >= B) continue;
          const j = yy * B + xx;
          for (let k = 0; k < 3; k++) G[i * 3 + k] += Q[j * 3 + k];
        }
      }
    // H = Qᵀ·G (3×3); QH = Q·H.
    const H = new Float64Array(9);
    for (let i = 0; i < B * B; i++)
      for (let k = 0; k < 3; k++) for (let l = 0; l < 3; l++) H[k * 3 + l] += Q[i * 3 + k] * G[i * 3 + l];
    for (let i = 0; i < B * B; i++)
      for (let l = 0; l < 3; l++) {
        let s = 0;
        for (let k = 0; k < 3; k++) s += Q[i * 3 + k] * H[k * 3 + l];
        QH[i * 3 + l] = s;
      }
    for (let a = 0; a < n; a++) {
      const ay = lags[2 * a];
      const ax = lags[2 * a + 1];
      const direct = (ay === by && ax === bx ? 1 : 0) * (B - ay) * (B - Math.abs(ax));
      // (I−P)E(I−P) = E − Q·Gᵀ − G·Qᵀ + Q·H·Qᵀ.
      K[a * n + b] =
        direct -
        shiftedTrace(Q, G, B, ay, ax) -
        shiftedTrace(G, Q, B, ay, ax) +
        shiftedTrace(QH, Q, B, ay, ax);
    }
  }
  biasCache.set(key, K);
  return K;
}

/** Plane-fit residual of the block at (y0, x0) into e (B²), or false when it touches a clip level. */
function blockResidual(
  plane: ArrayLike<number>,
  width: number,
  y0: number,
  x0: number,
  B: number,
  Q: Float64Array,
  clipLow: number,
  clipHigh: number,
  e: Float64Array,
): boolean {
  let c0 = 0;
  let c1 = 0;
  let c2 = 0;
  for (let y = 0; y < B; y++)
    for (let x = 0; x < B; x++) {
      const v = plane[(y0 + y) * width + x0 + x];
      if (v <= clipLow || v >= clipHigh) return false;
      const i = y * B + x;
      e[i] = v;
      c0 += Q[i * 3] * v;
      c1 += Q[i * 3 + 1] * v;
      c2 += Q[i * 3 + 2] * v;
    }
  for (let i = 0; i < B * B; i++) e[i] -= c0 * Q[i * 3] + c1 * Q[i * 3 + 1] + c2 * Q[i * 3 + 2];
  return true;
}

/** Indices of the flat blocks (iterative selection, see the file comment), flattest first. */
function flatBlocks(vars: Float64Array): number[] {
  const order = Array.from(vars.keys()).sort((a, b) => vars[a] - vars[b] || a - b);
  if (order.length < MIN_BLOCKS) return [];
  let v = vars[order[Math.floor(0.05 * order.length)]];
  let kept = 0;
  for (let it = 0; it < 20 && v > 0; it++) {
    let n = 0;
    let s = 0;
    while (n < order.length && vars[order[n]] <= KEEP_RATIO * v) s += vars[order[n++]];
    const next = s / Math.max(1, n);
    kept = n;
    if (next === v) break;
    v = next;
  }
  return order.slice(0, Math.min(kept, MAX_BLOCKS));
}

/**
 * Measure the noise autocovariance of `plane` (width × height, row-major) from its flattest blocks; samples at
 * or beyond `clipLow`/`clipHigh` are avoided. Null when fewer than MIN_BLOCKS flat blocks are found or the
 * flat blocks carry no variance at all (then nothing is known about the noise's colour).
 */
export function estimateNoisePsd(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  clipLow = Number.NEGATIVE_INFINITY,
  clipHigh = Number.POSITIVE_INFINITY,
): NoisePsd | null {
  const B = BLOCK;
  const L = PSD_LAG;
  const bw = Math.floor(width / B);
  const bh = Math.floor(height / B);
  if (bw * bh < MIN_BLOCKS) return null;
  const Q = planeBasis(B);
  const e = new Float64Array(B * B);
  const vars = new Float64Array(bw * bh).fill(Number.POSITIVE_INFINITY);
  for (let by = 0; by < bh; by++)
    for (let bx = 0; bx < bw; bx++) {
      if (!blockResidual(plane, width, by * B, bx * B, B, Q, clipLow, clipHigh, e)) continue;
      let s = 0;
      for (let i = 0; i < B * B; i++) s += e[i] * e[i];
      vars[by * bw + bx] = s / (B * B);
    }
  const finite = Float64Array.from(vars.filter((v) => Number.isFinite(v)));
  const index = Array.from(vars.keys()).filter((i) => Number.isFinite(vars[i]));
  const kept = flatBlocks(finite).map((k) => index[k]);
  if (kept.length < MIN_BLOCKS) return null;
  const lags = halfLags(L);
  const n = lags.length / 2;
  const s = new Float64Array(n);
  for (const k of kept) {
    blockResidual(plane, width, Math.floor(k / bw) * B, (k % bw) * B, B, Q, clipLow, clipHigh, e);
    for (let a = 0; a < n; a++) s[a] += shiftedProducts(e, B, lags[2 * a], lags[2 * a + 1]);
  }
  for (let a = 0; a < n; a++) s[a] /= kept.length;
  const r = solveLeastSquares(biasMatrix(B, lags), s, n);
  if (!(r[0] > 0)) return null;
  const side = 2 * L + 1;
  const autocov = new Float64Array(side * side);
  for (let a = 0; a < n; a++) {
    const dy = lags[2 * a];
    const dx = lags[2 * a + 1];
    autocov[(dy + L) * side + dx + L] = r[a];
    autocov[(L - dy) * side + L - dx] = r[a];
  }
  return {
    ...psdFromAutocov(autocov, L, kept.length),
    blockVariances: Float64Array.from(kept, (k) => vars[k]),
    blockOrigins: Int32Array.from(kept, (k) => Math.floor(k / bw) * B * width + (k % bw) * B),
  };
}

/** The NoisePsd of an autocovariance on the full (2·L + 1)² lag grid (r(0) > 0): σ, flatness, shares, the verdict. */
export function psdFromAutocov(autocov: Float64Array, L: number, blocks: number): NoisePsd {
  const side = 2 * L + 1;
  const r0 = autocov[L * side + L];
  let sum2 = 0;
  for (let i = 0; i < autocov.length; i++) sum2 += (autocov[i] / r0) ** 2;
  const flatness = 1 / sum2;
  const highShare = highFrequencyShare(autocov, L);
  return {
    lag: L,
    autocov,
    sigma: Math.sqrt(r0),
    blocks,
    flatness,
    lagOne: (autocov[L * side + L + 1] + autocov[(L + 1) * side + L]) / (2 * r0),
    highShare,
    correlated: flatness < WHITE_FLATNESS && highShare < HIGH_SHARE,
  };
}

/** Mean of Σ_Δ ρ(Δ)·cos(ω·Δ) over the grid ω = π·k/8 (k = −8…7 per axis) with max(|ωy|, |ωx|) ≥ 3π/4. */
function highFrequencyShare(autocov: Float64Array, L: number): number {
  const side = 2 * L + 1;
  const r0 = autocov[L * side + L];
  let sum = 0;
  let count = 0;
  for (let a = -8; a < 8; a++)
    for (let b = -8; b < 8; b++) {
      if (Math.max(Math.abs(a), Math.abs(b)) < 6) continue;
      for (let dy = -L; dy <= L; dy++)
        for (let dx = -L; dx <= L; dx++)
          sum += autocov[(dy + L) * side + dx + L] * Math.cos((Math.PI * (a * dy + b * dx)) / 8);
      count++;
    }
  return sum / (count * r0);
}

/** Σᵢ eᵢ·eᵢ₊Δ over the pairs inside a B×B block. */
function shiftedProducts(e: Float64Array, B: number, dy: number, dx: number): number {
  let s = 0;
  for (let y = 0; y + dy < B; y++) {
    const r0 = y * B;
    const r1 = (y + dy) * B + dx;
    for (let x = Math.max(0, -dx); x < B && x + dx < B; x++) s += e[r0 + x] * e[r1 + x];
  }
  return s;
}

/** x minimising ‖K·x − s‖ (n×n): the normal equations through linalg's ridged Cholesky solve. */
function solveLeastSquares(K: Float64Array, s: Float64Array, n: number): Float64Array {
  const A = new Float64Array(n * n);
  const b = new Float64Array(n);
  for (let i = 0; i < n; i++)
    for (let k = 0; k < n; k++) {
      const kik = K[k * n + i];
      b[i] += kik * s[k];
      for (let j = 0; j < n; j++) A[i * n + j] += kik * K[k * n + j];
    }
  return solveSpdRidge(A, b, n);
}
