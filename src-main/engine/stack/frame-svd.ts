/**
 * Frame-mode SVD of a series of same-size planes: X = [vec(F₁) … vec(F_N)] ≈ μ·1ᵀ + 1·dᵀ + B·C.
 *
 * The mean is handled explicitly, in two parts, before any factoring:
 *  - μ, the mean frame (pixel-wise mean over the N frames), shared by every frame;
 *  - d_j, one scalar offset per frame: the spatial mean of F_j − μ (exposure, fade, flicker).
 * What is left, Y = X − μ1ᵀ − 1dᵀ (hw × N), is factored by its SVD Y = U·Σ·Vᵀ. The stored
 * basis ("eigen-frames") is P_i = Y·v_i = σ_i·u_i, and frame j is rebuilt as
 * F_j ≈ μ + d_j + Σ_{i≤k} P_i · V[j, i].
 *
 * The SVD is computed through the N×N Gram matrix G = YᵀY = V·Σ²·Vᵀ (N is 16–64, so G costs
 * hw·N²/2 multiply–adds and its eigen-decomposition is negligible). G is symmetric positive
 * semi-definite, so its SVD is its eigen-decomposition; we use the engine's one-sided Jacobi SVD.
 *
 * Accuracy (cross-product route): forming G squares the condition number, so an eigenvalue
 * λ_i = σ_i² carries an absolute error of order ε·σ₁² and σ_i is reliable to relative accuracy
 * only while σ_i ≳ √ε·σ₁ ≈ 1.5e-8·σ₁ (Golub & Van Loan, Matrix Computations 4th ed., §8.6.1 and
 * §5.3.7 on the normal equations — section numbers from memory; Demmel & Veselić 1992 for the
 * Jacobi step). Components that small carry < 1e-16 of the energy and are never worth coding.
 * Because P_i = Y·v_i is formed without dividing by σ_i, the reconstruction Y·V_k·V_kᵀ is an
 * orthogonal projection for any orthonormal V: at k = N it returns Y exactly (to rounding), and
 * for k < N its Frobenius error² is Σ_{i>k} σ_i² up to the eigenvector accuracy (Eckart & Young,
 * Psychometrika 1(3), 1936; Mirsky, Quart. J. Math. 11, 1960 — from memory).
 *
 * References
 * - C. Eckart, G. Young, "The approximation of one matrix by another of lower rank",
 *   Psychometrika 1(3):211–218, 1936. doi:10.1007/BF02288367.
 * - L. Sirovich, "Turbulence and the dynamics of coherent structures, Part I", Quart. Appl. Math.
 *   45(3):561–571, 1987 — the "method of snapshots": eigenvectors of the N×N snapshot correlation
 *   matrix give the spatial modes as combinations of snapshots (the Gram route used here).
 */
import { jacobiSvd } from '../linalg';

/** Machine epsilon of float64. */
const EPS = 2.220446049250313e-16;

/** The result of {@link frameModeSvd}. All arrays are float64. */
export interface FrameModeSvd {
  width: number;
  height: number;
  /** Number of frames N. */
  frames: number;
  /** Mean frame μ (h·w). */
  mean: Float64Array;
  /** Per-frame scalar offsets d_j = mean(F_j − μ) (N). Σ_j d_j = 0. */
  offsets: Float64Array;
  /** Singular values of Y along the frame mode, non-increasing (N). */
  sigma: Float64Array;
  /** Right singular vectors, N×N row-major: V[j·N + i] is the weight of eigen-frame i in frame j. */
  V: Float64Array;
  /** ‖Y‖_F², the energy left after mean removal (= Σ σ_i² up to rounding). */
  energy: number;
  /** Spectrum reliability floor: σ below this is numerical noise of the Gram route (√(N·ε)·σ₁). */
  sigmaFloor: number;
}

export interface FrameModeOptions {
  /** Remove the mean frame μ. Default true. */
  removeMean?: boolean;
  /** Remove a scalar offset per frame. Default true. */
  removeOffsets?: boolean;
}

function checkFrames(frames: ArrayLike<number>[], width: number, height: number): void {
  if (frames.length < 1) throw new RangeError('a series needs at least one frame');
  const n = width * height;
  for (let j = 0; j < frames.length; j++)
    if (frames[j].length !== n)
      throw new RangeError(`frame ${j} has ${frames[j].length} samples; expected ${width}×${height} = ${n}`);
}

/** Mean frame and per-frame offsets, as used by {@link frameModeSvd}. */
function seriesMeans(
  frames: ArrayLike<number>[],
  width: number,
  height: number,
  options: FrameModeOptions = {},
): { mean: Float64Array; offsets: Float64Array } {
  checkFrames(frames, width, height);
  const n = width * height;
  const N = frames.length;
  const mean = new Float64Array(n);
  if (options.removeMean !== false) {
    for (const f of frames) for (let p = 0; p < n; p++) mean[p] += f[p];
    for (let p = 0; p < n; p++) mean[p] /= N;
  }
  const offsets = new Float64Array(N);
  if (options.removeOffsets !== false) {
    for (let j = 0; j < N; j++) {
      const f = frames[j];
      let s = 0;
      for (let p = 0; p < n; p++) s += f[p] - mean[p];
      offsets[j] = s / n;
    }
  }
  return { mean, offsets };
}

/**
 * Frame-mode SVD of a series (one channel) through the N×N Gram matrix.
 * @param frames - N planes of width·height samples each (any scale).
 * @example const f = frameModeSvd(planes, 256, 256); f.sigma // eigen-frame spectrum
 * @throws RangeError if a frame has the wrong number of samples.
 */
export function frameModeSvd(
  frames: ArrayLike<number>[],
  width: number,
  height: number,
  options: FrameModeOptions = {},
): FrameModeSvd {
  const { mean, offsets } = seriesMeans(frames, width, height, options);
  const n = width * height;
  const N = frames.length;
  // Gram of the centred frames, accumulated over pixel blocks so that only an N×BLOCK slice of
  // Y = X − μ1ᵀ − 1dᵀ is held at a time (memory N·BLOCK instead of N·h·w).
  const G = new Float64Array(N * N);
  const BLOCK = 4096;
  const Yb = Array.from({ length: N }, () => new Float64Array(BLOCK));
  for (let p0 = 0; p0 < n; p0 += BLOCK) {
    const len = Math.min(BLOCK, n - p0);
    for (let j = 0; j < N; j++) {
      const f = frames[j];
      const y = Yb[j];
      const d = offsets[j];
      for (let q = 0; q < len; q++) y[q] = f[p0 + q] - mean[p0 + q] - d;
    }
    for (let a = 0; a < N; a++) {
      const ya = Yb[a];
      for (let b = a; b < N; b++) {
        const yb = Yb[b];
        let s0 = 0;
        let s1 = 0;
        let q = 0;
        for (; q + 1 < len; q += 2) {
          s0 += ya[q] * yb[q];
          s1 += ya[q + 1] * yb[q + 1];
        }
        if (q < len) s0 += ya[q] * yb[q];
        G[a * N + b] += s0 + s1;
      }
    }
  }
  for (let a = 0; a < N; a++) for (let b = 0; b < a; b++) G[a * N + b] = G[b * N + a];
  let energy = 0;
  for (let j = 0; j < N; j++) energy += G[j * N + j];
  const { s, V } = jacobiSvd({ rows: N, cols: N, data: G });
  const sigma = new Float64Array(N);
  for (let i = 0; i < N; i++) sigma[i] = Math.sqrt(Math.max(0, s[i]));
  const Vd = new Float64Array(N * N);
  Vd.set(V.data.subarray(0, N * N));
  // Sign convention: make the largest-magnitude entry of each v_i positive (deterministic output).
  for (let i = 0; i < N; i++) {
    let best = 0;
    for (let j = 0; j < N; j++) if (Math.abs(Vd[j * N + i]) > Math.abs(best)) best = Vd[j * N + i];
    if (best < 0) for (let j = 0; j < N; j++) Vd[j * N + i] = -Vd[j * N + i];
  }
  return {
    width,
    height,
    frames: N,
    mean,
    offsets,
    sigma,
    V: Vd,
    energy,
    sigmaFloor: Math.sqrt(N * EPS) * sigma[0],
  };
}

/** Y_j = F_j − μ − d_j as float64 planes. */
export function centredFrames(
  frames: ArrayLike<number>[],
  mean: Float64Array,
  offsets: Float64Array,
): Float64Array[] {
  const n = mean.length;
  return frames.map((f, j) => {
    const y = new Float64Array(n);
    const d = offsets[j];
    for (let p = 0; p < n; p++) y[p] = f[p] - mean[p] - d;
    return y;
  });
}

/**
 * Eigen-frames P_i = Y·v_i = σ_i·u_i for i < k (each h·w, on the sample scale).
 * @param Y - centred frames from {@link centredFrames}.
 */
export function eigenFrames(Y: Float64Array[], svd: FrameModeSvd, k: number): Float64Array[] {
  const N = svd.frames;
  const n = svd.width * svd.height;
  const out: Float64Array[] = [];
  for (let i = 0; i < Math.min(k, N); i++) {
    const P = new Float64Array(n);
    for (let j = 0; j < N; j++) {
      const w = svd.V[j * N + i];
      if (w === 0) continue;
      const y = Y[j];
      for (let p = 0; p < n; p++) P[p] += w * y[p];
    }
    out.push(P);
  }
  return out;
}

/**
 * Rebuild frame j from the mean, the offset and k eigen-frames with coefficients `coef[j·k + i]`.
 * Sums in a fixed order so that one-frame and all-frame decodes agree bit for bit.
 */
export function rebuildFrame(
  mean: ArrayLike<number>,
  offset: number,
  basis: ArrayLike<number>[],
  coef: ArrayLike<number>,
  out: Float64Array = new Float64Array(mean.length),
): Float64Array {
  const n = mean.length;
  for (let p = 0; p < n; p++) out[p] = mean[p] + offset;
  for (let i = 0; i < basis.length; i++) {
    const c = coef[i];
    if (c === 0) continue;
    const b = basis[i];
    for (let p = 0; p < n; p++) out[p] += c * b[p];
  }
  return out;
}

/**
 * Eigen-frame i, P_i = Σ_j V[j,i]·(F_j − μ − d_j), straight from the frames (no centred copy held).
 * Same arithmetic as {@link eigenFrames} on {@link centredFrames}, so the values are identical.
 */
export function eigenFrameOf(frames: ArrayLike<number>[], svd: FrameModeSvd, i: number): Float64Array {
  const N = svd.frames;
  const n = svd.width * svd.height;
  const P = new Float64Array(n);
  const { mean, offsets } = svd;
  for (let j = 0; j < N; j++) {
    const w = svd.V[j * N + i];
    if (w === 0) continue;
    const f = frames[j];
    const d = offsets[j];
    for (let p = 0; p < n; p++) P[p] += w * (f[p] - mean[p] - d);
  }
  return P;
}
