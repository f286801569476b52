/**
 * Factor the planes of a decoded scan for the page: σ, U, V of each plane up to a rank, packed once
 * in the contract's factor-set layout (src-main/contract/api.ts). Runs inside a worker thread.
 *
 * Uses the engine's randomizedSvd when the engine exports it; until then a compact randomized range
 * finder in float64 (Halko, Martinsson, Tropp, "Finding structure with randomness", SIAM Review
 * 53(2):217–288, 2011, doi:10.1137/090771806, Algorithms 4.4 and 5.1) with the small SVD taken from
 * the Gram matrix through the engine's Jacobi SVD.
 */
import { type DecodedImage, encodeFactorSet, type FactorArrays } from '../../contract';
import * as linalg from '../../engine/linalg';

/** Oversampling p of HMT 2011 §4.2 ("p = 5 or 10 is often adequate"). */
const OVERSAMPLE = 10;
/** Power iterations q (HMT 2011 §4.5); 2 gives ≈1.004× the optimal Frobenius error on image spectra. */
const POWER_ITERATIONS = 2;

export type ProgressFn = (done: number, total: number, stage: string) => void;

interface PlaneSvd {
  s: Float64Array;
  /** k×m, vector i contiguous. */
  ut: Float32Array;
  /** k×n, vector i contiguous. */
  vt: Float32Array;
}

type EngineRsvd = (a: linalg.Matrix, k: number, opts?: Record<string, unknown>) => linalg.SvdResult;

/** Truncated SVD of one m×n plane (row-major f32) to rank k. */
export function planeSvd(plane: Float32Array, m: number, n: number, k: number, seed = 1): PlaneSvd {
  const r = Math.min(k, m, n);
  const engineRsvd = (linalg as unknown as Record<string, unknown>).randomizedSvd as EngineRsvd | undefined;
  if (engineRsvd) {
    const res = engineRsvd({ rows: m, cols: n, data: plane }, r, { seed, powerIterations: POWER_ITERATIONS });
    return {
      s: Float64Array.from(res.s.subarray(0, r)),
      ut: columnsToRows(res.U, r),
      vt: columnsToRows(res.V, r),
    };
  }
  return fallbackRsvd(plane, m, n, r, seed);
}

function columnsToRows(a: linalg.Matrix, k: number): Float32Array {
  const out = new Float32Array(k * a.rows);
  for (let i = 0; i < a.rows; i++) for (let c = 0; c < k; c++) out[c * a.rows + i] = a.data[i * a.cols + c];
  return out;
}

/** Deterministic xorshift-based Gaussian draws (Box–Muller), so a seed gives a fixed factorisation. */
function gaussian(seed: number): () => number {
  let x = seed >>> 0 || 0x9e3779b9;
  const u = () => {
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    return ((x >>> 0) + 0.5) / 4294967296;
  };
  return () => Math.sqrt(-2 * Math.log(u())) * Math.cos(2 * Math.PI * u());
}

/** rows of Yt (l×m) = (A · Zt[c]ᵀ): Yt[c,i] = A[i,:]·Zt[c,:]. */
function timesRows(A: Float32Array, m: number, n: number, Zt: Float64Array, l: number): Float64Array {
  const Yt = new Float64Array(l * m);
  for (let i = 0; i < m; i++) {
    const ro = i * n;
    for (let c = 0; c < l; c++) {
      const zo = c * n;
      let s0 = 0;
      let s1 = 0;
      let j = 0;
      for (; j + 1 < n; j += 2) {
        s0 += A[ro + j] * Zt[zo + j];
        s1 += A[ro + j + 1] * Zt[zo + j + 1];
      }
      if (j < n) s0 += A[ro + j] * Zt[zo + j];
      Yt[c * m + i] = s0 + s1;
    }
  }
  return Yt;
}

/** Zt (l×n) = (Aᵀ Q)ᵀ: Zt[c,:] = Σ_i Qt[c,i] A[i,:]. */
function transposeTimes(A: Float32Array, m: number, n: number, Qt: Float64Array, l: number): Float64Array {
  const Zt = new Float64Array(l * n);
  for (let i = 0; i < m; i++) {
    const ro = i * n;
    for (let c = 0; c < l; c++) {
      const q = Qt[c * m + i];
      if (q === 0) continue;
      const zo = c * n;
      for (let j = 0; j < n; j++) Zt[zo + j] += q * A[ro + j];
    }
  }
  return Zt;
}

/** Modified Gram–Schmidt, twice, on the rows of X (l×len); zero rows stay zero. */
function orthonormalRows(X: Float64Array, l: number, len: number): void {
  for (let pass = 0; pass < 2; pass++)
    for (let c = 0; c < l; c++) {
      const co = c * len;
      for (let d = 0; d < c; d++) {
        const dO = d * len;
        let dot = 0;
        for (let j = 0; j < len; j++) dot += X[co + j] * X[dO + j];
        for (let j = 0; j < len; j++) X[co + j] -= dot * X[dO + j];
      }
      let nrm = 0;
      for (let j = 0; j < len; j++) nrm += X[co + j] * X[co + j];
      nrm = Math.sqrt(nrm);
      const inv = nrm > 1e-300 ? 1 / nrm : 0;
      for (let j = 0; j < len; j++) X[co + j] *= inv;
    }
}

function fallbackRsvd(A: Float32Array, m: number, n: number, k: number, seed: number): PlaneSvd {
  const l = Math.min(k + OVERSAMPLE, m, n);
  const g = gaussian(seed);
  const Om = new Float64Array(l * n);
  for (let i = 0; i < Om.length; i++) Om[i] = g();
  let Qt = timesRows(A, m, n, Om, l);
  orthonormalRows(Qt, l, m);
  for (let q = 0; q < POWER_ITERATIONS; q++) {
    const Zt = transposeTimes(A, m, n, Qt, l);
    orthonormalRows(Zt, l, n);
    Qt = timesRows(A, m, n, Zt, l);
    orthonormalRows(Qt, l, m);
  }
  const Bt = transposeTimes(A, m, n, Qt, l); // B = Qᵀ A, l×n, row c = Bt[c,:]
  const G = new Float64Array(l * l);
  for (let a = 0; a < l; a++)
    for (let b = a; b < l; b++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += Bt[a * n + j] * Bt[b * n + j];
      G[a * l + b] = s;
      G[b * l + a] = s;
    }
  const eig = linalg.jacobiSvd({ rows: l, cols: l, data: G }); // G = W Λ Wᵀ, symmetric PSD
  const s = new Float64Array(k);
  const ut = new Float32Array(k * m);
  const vt = new Float32Array(k * n);
  for (let c = 0; c < k; c++) {
    const sig = Math.sqrt(Math.max(0, eig.s[c]));
    s[c] = sig;
    // u_c = Q w_c ; v_c = Bᵀ w_c / σ_c
    for (let a = 0; a < l; a++) {
      const w = eig.U.data[a * eig.U.cols + c];
      if (w === 0) continue;
      for (let i = 0; i < m; i++) ut[c * m + i] += w * Qt[a * m + i];
      const ws = sig > 0 ? w / sig : 0;
      for (let j = 0; j < n; j++) vt[c * n + j] += ws * Bt[a * n + j];
    }
  }
  return { s, ut, vt };
}

/** Factor every plane to `maxRank` and pack σ, U, V and the source planes. */
export function factorScan(img: DecodedImage, maxRank: number, onProgress?: ProgressFn): Uint8Array {
  const m = img.height;
  const n = img.width;
  const k = Math.max(1, Math.min(maxRank, m, n));
  const names = img.colour === 'rgb' ? ['R', 'G', 'B', 'A'] : ['Y', 'A'];
  const channels = img.planes.map((_, c) => names[c]);
  const arrays: FactorArrays = {};
  const energy: number[] = [];
  const ranks: number[] = [];
  img.planes.forEach((plane, c) => {
    onProgress?.(c, img.planes.length, `factoring plane ${channels[c]}`);
    let e = 0;
    for (let i = 0; i < plane.length; i++) e += plane[i] * plane[i];
    energy.push(e);
    const svd = planeSvd(plane, m, n, k, 1 + c);
    ranks.push(svd.s.length);
    arrays[`sigma.${c}`] = Float32Array.from(svd.s);
    arrays[`u.${c}`] = svd.ut;
    arrays[`v.${c}`] = svd.vt;
    arrays[`src.${c}`] = img.bitDepth === 16 ? Uint16Array.from(plane) : Uint8Array.from(plane);
  });
  onProgress?.(img.planes.length, img.planes.length, 'factored');
  return encodeFactorSet(
    {
      width: n,
      height: m,
      channels,
      ranks,
      energy,
      peak: img.bitDepth === 16 ? 65535 : 255,
      complete: k >= Math.min(m, n),
    },
    arrays,
  );
}
