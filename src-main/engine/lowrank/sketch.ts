/**
 * The leading singular values of a plane too large to hold as floats, from a randomized sketch that reads
 * the plane in strips of rows: the randomized range finder with q power iterations (Halko, Martinsson &
 * Tropp, "Finding structure with randomness", SIAM Review 53(2), 2011, Alg. 4.4), then σ(B) for
 * B = QᵀA (their Alg. 5.1, without forming U or V). Every product with A or Aᵀ is one pass over the
 * strips, 2q + 2 passes in all; memory is O((m + n)·l + strip·n) for l = k + oversampling.
 *
 * Constant rows (blank paper, margins) are not multiplied: a row of value c contributes c·(1ᵀX) to A·X
 * and c·yᵢ to every row of Aᵀ·Y, O(l) each, so a blank scan costs one read of its samples per pass.
 */
import { bytesFor, defaultBackend, Rng, singularValues } from '../linalg';

/** Fills `out` with rows [y0, y1) of the plane as float64 (row-major, width values per row). */
export type RowSource = (y0: number, y1: number, out: Float64Array) => void;

export interface SketchOptions {
  /** Values wanted. */
  k: number;
  /** Extra sketch columns (HMT §4.2 suggest 5–10; more makes the last values better). */
  oversample: number;
  /** Power iterations q (HMT Alg. 4.4). */
  powerIters: number;
  /** Rows read at a time. Default 64. */
  stripRows?: number;
  seed?: number;
  /** Called after each strip: `done` of `total` strips over all passes. */
  onStrip?: (done: number, total: number) => void;
}

export interface SketchResult {
  /** Top min(k, rank found) singular values, non-increasing. */
  s: Float64Array;
  /** Exact Σ aᵢⱼ² (read in the first pass). */
  energy: number;
  /** Passes over the plane. */
  passes: number;
  /** Sketch width l = k + oversample (capped by the short side). */
  columns: number;
  /** Rows found constant (multiplied in O(l)). */
  constantRows: number;
}

/** Modified Gram–Schmidt, twice, on the columns of X (rows×l, row-major); near-dependent columns become 0. */
function orthonormalise(X: Float64Array, rows: number, l: number): void {
  const norms0 = new Float64Array(l);
  for (let j = 0; j < l; j++) {
    let s = 0;
    for (let i = 0; i < rows; i++) s += X[i * l + j] * X[i * l + j];
    norms0[j] = Math.sqrt(s);
  }
  for (let pass = 0; pass < 2; pass++)
    for (let j = 0; j < l; j++) {
      for (let p = 0; p < j; p++) {
        let d = 0;
        for (let i = 0; i < rows; i++) d += X[i * l + p] * X[i * l + j];
        if (d !== 0) for (let i = 0; i < rows; i++) X[i * l + j] -= d * X[i * l + p];
      }
      let s = 0;
      for (let i = 0; i < rows; i++) s += X[i * l + j] * X[i * l + j];
      const nrm = Math.sqrt(s);
      // Relative to the column's first norm: a column already in the span of the earlier ones is dropped.
      const keep = nrm > 1e-10 * norms0[j] && nrm > 0;
      const inv = keep ? 1 / nrm : 0;
      for (let i = 0; i < rows; i++) X[i * l + j] *= inv;
    }
}

/** Top singular values of an m×n plane read through `rows` (see the module comment). */
export function sketchSpectrum(m: number, n: number, rows: RowSource, opts: SketchOptions): SketchResult {
  const l = Math.min(opts.k + opts.oversample, m, n);
  const strip = Math.max(1, Math.min(m, opts.stripRows ?? 64));
  const passes = 2 * opts.powerIters + 2;
  const strips = Math.ceil(m / strip);
  const total = passes * strips;
  let done = 0;
  const ws = defaultBackend().workspace(bytesFor(0, 2 * strip * n + n * l + m * l + 2 * strip * l + l));
  let energy = 0;
  let constantRows = 0;
  let bt: Float64Array;
  try {
    const S = ws.f64(strip * n);
    const packed = ws.f64(strip * n);
    const X = ws.f64(n * l); // Ω, then Z = AᵀQ
    const Y = ws.f64(m * l);
    const Xs = ws.f64(strip * l);
    const Ys = ws.f64(strip * l);
    const colsum = new Float64Array(l);
    const rowValue = new Float64Array(strip);
    const isConst = new Uint8Array(strip);
    new Rng(opts.seed ?? 0x5eed).fillNormal(X);

    /** Read strip [y0, y1), split rows into constant ones and packed ones; returns the packed count. */
    const load = (y0: number, y1: number, first: boolean): number => {
      const r = y1 - y0;
      rows(y0, y1, S);
      let np = 0;
      for (let i = 0; i < r; i++) {
        const off = i * n;
        const c = S[off];
        let constant = true;
        for (let j = 1; j < n; j++)
          if (S[off + j] !== c) {
            constant = false;
            break;
          }
        if (first) {
          let e = 0;
          for (let j = 0; j < n; j++) e += S[off + j] * S[off + j];
          energy += e;
          if (constant) constantRows++;
        }
        isConst[i] = constant ? 1 : 0;
        rowValue[i] = c;
        if (!constant) {
          packed.set(S.subarray(off, off + n), np * n);
          np++;
        }
      }
      return np;
    };
    /** Y = A·X, one pass. */
    const timesA = (first: boolean) => {
      colsum.fill(0);
      for (let i = 0; i < n; i++) for (let j = 0; j < l; j++) colsum[j] += X[i * l + j];
      for (let y0 = 0; y0 < m; y0 += strip) {
        const y1 = Math.min(m, y0 + strip);
        const np = load(y0, y1, first);
        if (np > 0) ws.gemm(np, l, n, packed, 0, n, 1, X, 0, l, Ys, 0, l, false);
        for (let i = 0, p = 0; i < y1 - y0; i++) {
          const dst = (y0 + i) * l;
          if (isConst[i]) for (let j = 0; j < l; j++) Y[dst + j] = rowValue[i] * colsum[j];
          else {
            Y.set(Ys.subarray(p * l, p * l + l), dst);
            p++;
          }
        }
        opts.onStrip?.(++done, total);
      }
    };
    /** X = Aᵀ·Y, one pass. */
    const timesAt = () => {
      X.fill(0);
      const acc = new Float64Array(l);
      for (let y0 = 0; y0 < m; y0 += strip) {
        const y1 = Math.min(m, y0 + strip);
        const np = load(y0, y1, false);
        for (let i = 0, p = 0; i < y1 - y0; i++) {
          const src = (y0 + i) * l;
          if (isConst[i]) {
            const c = rowValue[i];
            if (c !== 0) for (let j = 0; j < l; j++) acc[j] += c * Y[src + j];
          } else {
            Xs.set(Y.subarray(src, src + l), p * l);
            p++;
          }
        }
        if (np > 0) ws.gemm(n, l, np, packed, 0, 1, n, Xs, 0, l, X, 0, l, true);
        opts.onStrip?.(++done, total);
      }
      for (let i = 0; i < n; i++) for (let j = 0; j < l; j++) X[i * l + j] += acc[j];
    };
    timesA(true);
    orthonormalise(Y, m, l);
    for (let it = 0; it < opts.powerIters; it++) {
      timesAt();
      orthonormalise(X, n, l);
      timesA(false);
      orthonormalise(Y, m, l);
    }
    timesAt(); // Bᵀ = AᵀQ, n×l
    bt = Float64Array.from(X);
  } finally {
    ws.release();
  }
  const s = singularValues({ rows: n, cols: l, data: bt });
  let r = 0;
  const tol = (s[0] ?? 0) * 1e-12;
  while (r < Math.min(opts.k, s.length) && s[r] > tol) r++;
  return { s: s.slice(0, r), energy, passes, columns: l, constantRows };
}
