/**
 * Truncated Tucker decomposition of an h×w×N series tensor T (rows × columns × frames):
 * T ≈ G ×₁ U₁ ×₂ U₂ ×₃ U₃, with U₁ (h×r₁), U₂ (w×r₂), U₃ (N×r₃) orthonormal and core G (r₁×r₂×r₃).
 * Frame j is rebuilt as F̂_j = U₁ · (Σ_k U₃[j,k] G_k) · U₂ᵀ, so one frame needs no other frame.
 *
 * Two ways to pick the factors:
 *  - truncated HOSVD: U_n = leading left singular vectors of each unfolding T_(n) of the original
 *    tensor. Error bound ‖T − T̂‖² ≤ Σ_n Σ_{i>r_n} σ_i^{(n)}² (De Lathauwer et al. 2000, Property 10,
 *    from memory).
 *  - sequentially truncated HOSVD (ST-HOSVD): mode by mode, U_n from the unfolding of the tensor
 *    already projected on the earlier modes. Cheaper, never worse in that bound, and its error is
 *    exactly Σ_n (energy discarded at step n) (Vannieuwenhoven et al. 2012, Theorem 5.1 — the theorem
 *    number from memory; the identity follows from the orthogonality of the discarded parts).
 * Each unfolding's left singular vectors come from its Gram matrix T_(n)T_(n)ᵀ (h×h, w×w or N×N)
 * by the Jacobi eigen-solver; see frame-svd.ts for the accuracy of this route.
 *
 * References
 * - L. De Lathauwer, B. De Moor, J. Vandewalle, "A multilinear singular value decomposition",
 *   SIAM J. Matrix Anal. Appl. 21(4):1253–1278, 2000. doi:10.1137/S0895479896305696.
 * - N. Vannieuwenhoven, R. Vandebril, K. Meerbergen, "A new truncation strategy for the higher-order
 *   singular value decomposition", SIAM J. Sci. Comput. 34(2):A1027–A1052, 2012. doi:10.1137/110836067.
 * - L. R. Tucker, "Some mathematical notes on three-mode factor analysis", Psychometrika 31(3), 1966.
 */
import { jacobiSvd } from '../../src-main/engine/linalg';

export interface TuckerResult {
  height: number;
  width: number;
  frames: number;
  ranks: [number, number, number];
  /** U₁, h×r₁ row-major. */
  U1: Float64Array;
  /** U₂, w×r₂ row-major. */
  U2: Float64Array;
  /** U₃, N×r₃ row-major. */
  U3: Float64Array;
  /** Core, r₃ slices of r₁×r₂ (row-major), slice k at offset k·r₁·r₂. */
  core: Float64Array;
  /** Mode spectra of the tensor each factor was taken from (σ^{(n)}, full length). */
  spectra: [Float64Array, Float64Array, Float64Array];
  /** Energy discarded at each mode (Σ_{i>r_n} σ_i^{(n)}²). */
  discarded: [number, number, number];
}

/** Leading eigenvectors (as columns, n×r row-major) and all eigenvalues of a symmetric PSD n×n matrix. */
function leadingEigen(
  G: Float64Array,
  n: number,
  r: number,
): { vectors: Float64Array; values: Float64Array } {
  const { s, U } = jacobiSvd({ rows: n, cols: n, data: G });
  const vectors = new Float64Array(n * r);
  for (let i = 0; i < n; i++) for (let k = 0; k < r; k++) vectors[i * r + k] = U.data[i * n + k];
  return { vectors, values: Float64Array.from(s) };
}

function tailSum(values: Float64Array, r: number): number {
  let t = 0;
  for (let i = r; i < values.length; i++) t += Math.max(0, values[i]);
  return t;
}

/** Gram of the mode-1 unfolding (rows) of slices a×b: Σ_j A_j A_jᵀ (a×a). */
function gramRows(slices: Float64Array[], a: number, b: number): Float64Array {
  const G = new Float64Array(a * a);
  for (const A of slices)
    for (let p = 0; p < a; p++)
      for (let q = p; q < a; q++) {
        let s = 0;
        const po = p * b;
        const qo = q * b;
        for (let x = 0; x < b; x++) s += A[po + x] * A[qo + x];
        G[p * a + q] += s;
      }
  for (let p = 0; p < a; p++) for (let q = 0; q < p; q++) G[p * a + q] = G[q * a + p];
  return G;
}

/** Gram of the mode-2 unfolding (columns) of slices a×b: Σ_j A_jᵀ A_j (b×b). */
function gramCols(slices: Float64Array[], a: number, b: number): Float64Array {
  const G = new Float64Array(b * b);
  for (const A of slices)
    for (let y = 0; y < a; y++) {
      const o = y * b;
      for (let p = 0; p < b; p++) {
        const v = A[o + p];
        if (v === 0) continue;
        const go = p * b;
        for (let q = p; q < b; q++) G[go + q] += v * A[o + q];
      }
    }
  for (let p = 0; p < b; p++) for (let q = 0; q < p; q++) G[p * b + q] = G[q * b + p];
  return G;
}

/** Gram of the frame mode: G[j,l] = ⟨A_j, A_l⟩. */
function gramFrames(slices: Float64Array[]): Float64Array {
  const N = slices.length;
  const G = new Float64Array(N * N);
  for (let j = 0; j < N; j++)
    for (let l = j; l < N; l++) {
      let s = 0;
      const a = slices[j];
      const b = slices[l];
      for (let p = 0; p < a.length; p++) s += a[p] * b[p];
      G[j * N + l] = G[l * N + j] = s;
    }
  return G;
}

/** Uᵀ·A for U (a×r) and A (a×b): r×b. */
function leftProject(U: Float64Array, a: number, r: number, A: Float64Array, b: number): Float64Array {
  const out = new Float64Array(r * b);
  for (let y = 0; y < a; y++) {
    const ao = y * b;
    for (let k = 0; k < r; k++) {
      const u = U[y * r + k];
      if (u === 0) continue;
      const oo = k * b;
      for (let x = 0; x < b; x++) out[oo + x] += u * A[ao + x];
    }
  }
  return out;
}

/** A·U for A (a×b) and U (b×r): a×r. */
function rightProject(A: Float64Array, a: number, b: number, U: Float64Array, r: number): Float64Array {
  const out = new Float64Array(a * r);
  for (let y = 0; y < a; y++)
    for (let x = 0; x < b; x++) {
      const v = A[y * b + x];
      if (v === 0) continue;
      const uo = x * r;
      const oo = y * r;
      for (let k = 0; k < r; k++) out[oo + k] += v * U[uo + k];
    }
  return out;
}

function toF64(frames: ArrayLike<number>[], n: number): Float64Array[] {
  return frames.map((f) => {
    if (f.length !== n) throw new RangeError(`a frame has ${f.length} samples; expected ${n}`);
    return Float64Array.from(f);
  });
}

function clampRanks(
  ranks: [number, number, number],
  h: number,
  w: number,
  N: number,
): [number, number, number] {
  return [
    Math.max(1, Math.min(h, ranks[0])),
    Math.max(1, Math.min(w, ranks[1])),
    Math.max(1, Math.min(N, ranks[2])),
  ];
}

function coreFrom(projected: Float64Array[], U3: Float64Array, r3: number, sliceLen: number): Float64Array {
  const core = new Float64Array(r3 * sliceLen);
  projected.forEach((A, j) => {
    for (let k = 0; k < r3; k++) {
      const u = U3[j * r3 + k];
      if (u === 0) continue;
      const o = k * sliceLen;
      for (let p = 0; p < sliceLen; p++) core[o + p] += u * A[p];
    }
  });
  return core;
}

/**
 * Both HOSVD variants, modes in the order rows, columns, frames. Every frame is projected on U₁ then
 * U₂ and the core taken from those projections; `sequential` (ST-HOSVD) takes U₂ and U₃ from the
 * tensor already projected on the earlier modes, otherwise (truncated HOSVD) from the original tensor.
 */
function hosvd(
  frames: ArrayLike<number>[],
  height: number,
  width: number,
  ranks: [number, number, number],
  sequential: boolean,
): TuckerResult {
  const N = frames.length;
  const T = toF64(frames, height * width);
  const [r1, r2, r3] = clampRanks(ranks, height, width, N);
  const e1 = leadingEigen(gramRows(T, height, width), height, r1);
  const T1 = T.map((F) => leftProject(e1.vectors, height, r1, F, width)); // r1×w
  const e2 = leadingEigen(sequential ? gramCols(T1, r1, width) : gramCols(T, height, width), width, r2);
  const T2 = T1.map((A) => rightProject(A, r1, width, e2.vectors, r2)); // r1×r2
  const e3 = leadingEigen(gramFrames(sequential ? T2 : T), N, r3);
  return {
    height,
    width,
    frames: N,
    ranks: [r1, r2, r3],
    U1: e1.vectors,
    U2: e2.vectors,
    U3: e3.vectors,
    core: coreFrom(T2, e3.vectors, r3, r1 * r2),
    spectra: [e1.values, e2.values, e3.values].map((v) =>
      v.map((x) => Math.sqrt(Math.max(0, x))),
    ) as TuckerResult['spectra'],
    discarded: [tailSum(e1.values, r1), tailSum(e2.values, r2), tailSum(e3.values, r3)],
  };
}

/**
 * Truncated HOSVD (De Lathauwer, De Moor & Vandewalle 2000) of frames h×w (row-major), N of them.
 * @param ranks - [r₁, r₂, r₃], clamped to [1, h], [1, w], [1, N].
 * @example const t = truncatedHosvd(frames, 64, 64, [20, 20, 4]);
 */
export function truncatedHosvd(
  frames: ArrayLike<number>[],
  height: number,
  width: number,
  ranks: [number, number, number],
): TuckerResult {
  return hosvd(frames, height, width, ranks, false);
}

/**
 * Sequentially truncated HOSVD (Vannieuwenhoven, Vandebril & Meerbergen 2012), modes in the order
 * rows, columns, frames. `discarded` then sums exactly to the squared Frobenius error.
 */
export function sequentialHosvd(
  frames: ArrayLike<number>[],
  height: number,
  width: number,
  ranks: [number, number, number],
): TuckerResult {
  return hosvd(frames, height, width, ranks, true);
}

/** Rebuild frame j (h·w, row-major) from a Tucker result. Needs only U₃'s row j. */
export function tuckerFrame(t: TuckerResult, j: number): Float64Array {
  const [r1, r2, r3] = t.ranks;
  const S = new Float64Array(r1 * r2);
  for (let k = 0; k < r3; k++) {
    const u = t.U3[j * r3 + k];
    if (u === 0) continue;
    const o = k * r1 * r2;
    for (let p = 0; p < r1 * r2; p++) S[p] += u * t.core[o + p];
  }
  // U₁ · S · U₂ᵀ
  const SU2t = new Float64Array(r1 * t.width);
  for (let a = 0; a < r1; a++)
    for (let b = 0; b < r2; b++) {
      const v = S[a * r2 + b];
      if (v === 0) continue;
      for (let x = 0; x < t.width; x++) SU2t[a * t.width + x] += v * t.U2[x * r2 + b];
    }
  const out = new Float64Array(t.height * t.width);
  for (let y = 0; y < t.height; y++)
    for (let a = 0; a < r1; a++) {
      const u = t.U1[y * r1 + a];
      if (u === 0) continue;
      const oo = y * t.width;
      const so = a * t.width;
      for (let x = 0; x < t.width; x++) out[oo + x] += u * SU2t[so + x];
    }
  return out;
}
