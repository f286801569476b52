/**
 * Randomized truncated SVD: randomized range finder with power iterations, re-orthonormalised after
 * every product, then the SVD of the small projected matrix (range-projection.ts). Optionally block Krylov
 * iteration (block-krylov.ts).
 *
 * References
 * - N. Halko, P.-G. Martinsson, J. A. Tropp, "Finding structure with randomness: probabilistic
 *   algorithms for constructing approximate matrix decompositions", SIAM Review 53(2):217–288, 2011.
 *   doi:10.1137/090771806. Algorithm 4.4 (randomized subspace iteration: orthonormalise after each
 *   application of A and Aᵀ), Algorithm 5.1 (direct SVD of B = QᵀA), §4.2 (oversampling p = 5–10).
 * - C. Musco, C. Musco, "Randomized block Krylov methods for stronger and faster approximate singular
 *   value decomposition", NeurIPS 2015 (arXiv:1504.05477). Algorithm 2: K = [AΠ, (AAᵀ)AΠ, …,
 *   (AAᵀ)^q AΠ], Q = orth(K), SVD of QᵀA restricted to the top k.
 */

import { estimateRatio, squaredSingularValues } from './accuracy-estimate';
import { blockKrylovBasis, type RangeOps } from './block-krylov';
import { jacobiBytes } from './jacobi-svd';
import type { FloatArray, Matrix, Precision, SvdResult } from './matrix';
import { Orthonormalizer } from './qr';
import { DEFAULT_SEED, Rng } from './random';
import { project } from './range-projection';
import { reuseSvd } from './reuse-finish';
import { type Backend, bytesFor, defaultBackend, type Workspace } from './workspace';
import { fillNormalZiggurat } from './ziggurat';

/** HMT §4.2: "p = 5 or p = 10 is often enough"; 10 keeps the error within ~1% of optimal at q ≥ 2. */
const DEFAULT_OVERSAMPLE = 10;
/**
 * Default power iterations q, picked by measured accuracy (bench/engine.bench.ts, σᵢ = 1000/(1+i) + 1):
 * with l = k + p ≤ min(m,n)/8, q = 2 gives Frobenius error ≈ 1.004× the Eckart–Young optimum
 * (1500×2000, k = 50); when l is a larger share of the spectrum its tail is flatter and q = 2 drifts
 * past 1.01× (512², k = 200), so q = 3 is used there (≈ 1.009×).
 */
const DEFAULT_POWER_ITERS = 2;
/** l beyond min(m,n)/LARGE_BLOCK_FRACTION counts as a large share of the spectrum (one more power step). */
const LARGE_BLOCK_FRACTION = 8;

/** The q used when `powerIters` is not given, for l = k + p columns and r = min(m, n). */
function defaultPowerIters(l: number, r: number): number {
  return l > r / LARGE_BLOCK_FRACTION ? DEFAULT_POWER_ITERS + 1 : DEFAULT_POWER_ITERS;
}

export interface RandomizedSvdOptions {
  /** Extra columns p in the test matrix (HMT §4.2). Default 10, range 0…min(m,n)−k. */
  oversample?: number;
  /** Power iterations q (HMT Alg. 4.4). Default 2, or 3 when k + p > min(m,n)/8 (see `defaultPowerIters`); range 0…50. */
  powerIters?: number;
  /** Seed of the Gaussian test matrix; the same seed gives bit-identical output on one backend. Default 0x5eed. */
  seed?: number;
  /** Working and storage precision of A and the factors. Default: f32 for Float32Array input, else f64. */
  precision?: Precision;
  /** 'power' (HMT Alg. 4.4, default) or 'krylov' (Musco & Musco 2015, Alg. 2). */
  method?: 'power' | 'krylov';
  /** Where products run: default WebAssembly once `initEngine` resolved, else TypeScript. */
  backend?: Backend;
  /**
   * A-posteriori accuracy check (off by default): the target ratio of the rank-k Frobenius error to the
   * Eckart–Young optimum, e.g. 1.01. After the q power steps the ratio is estimated from the last two
   * half-steps (see `estimateRatio`); while the estimate exceeds the target, one more power step runs,
   * up to `maxPowerIters`. Range: a number > 1.
   */
  accuracy?: number;
  /** Most power steps the accuracy check may run. Default 8, range q…50. */
  maxPowerIters?: number;
  /** ‖A‖²_F when the caller already has it (the accuracy check needs it; otherwise one pass over A). */
  frobeniusSquared?: number;
  /**
   * How the power method ends: 'project' (default; B = QᵀA, one more product with A, HMT Alg. 5.1) or
   * 'reuse' (the factors from the last power step's A·Z = Q·R, no further product; reuse-finish.ts). 'reuse'
   * needs q ≥ 1 and the power method; otherwise 'project' runs.
   */
  finish?: 'project' | 'reuse';
}

/** What randomizedSvd did, beside the factors. */
export interface RandomizedSvdResult extends SvdResult {
  /** Power steps run (q, plus any the accuracy check added). */
  powerIters: number;
  /**
   * The accuracy check's estimate of ‖A − A_k‖_F ÷ the Eckart–Young optimum before the final projection
   * (an estimate, not a bound; NaN when no check ran).
   */
  ratioEstimate: number;
}

/** Default cap on power steps when the accuracy check asks for more. */
const DEFAULT_MAX_POWER_ITERS = 8;

/** Throws a RangeError naming the problem when A has non-finite entries. */
export function assertFinite(a: Matrix, what = 'matrix'): void {
  const d = a.data;
  const len = a.rows * a.cols;
  for (let i = 0; i < len; i++)
    if (!Number.isFinite(d[i]))
      throw new RangeError(
        `${what} has a non-finite entry (${d[i]}) at row ${Math.floor(i / a.cols)}, column ${i % a.cols}; replace NaN/infinite samples first`,
      );
}

export function checkRank(a: Matrix, k: number, fn: string): void {
  const r = Math.min(a.rows, a.cols);
  if (!Number.isInteger(k) || k < 1 || k > r)
    throw new RangeError(
      `${fn}: expected integer between 1 and ${r} for rank but received ${k} of type ${typeof k}`,
    );
  if (a.data.length < a.rows * a.cols)
    throw new RangeError(
      `${fn}: matrix ${a.rows}×${a.cols} needs ${a.rows * a.cols} elements, got ${a.data.length}`,
    );
}

/**
 * Rank-k truncated SVD A ≈ U·diag(s)·Vᵀ by the randomized range finder (HMT 2011, Alg. 4.4 + 5.1).
 * Expected Frobenius error: HMT Thm 10.5 / Cor 10.10; with the defaults, within ~0.5% of the
 * Eckart–Young optimum on image spectra. Deterministic for a given seed and backend.
 * U is m×k, V is n×k, in the working precision; s (Float64Array) is non-increasing.
 * Small SVD of B = QᵀA (L = k + p columns): for L < 48 one-sided Jacobi on the R of Bᵀ = Q₂R; from 48
 * up the eigen-decomposition of the L×L Gram matrix B·Bᵀ (Householder + QL with vectors, in WASM),
 * which gives each of the leading σᵢ to ≲ c·L·ε·σ₁²/σᵢ (≤ 1e-9·σ₁ for σᵢ ≥ 3e-4·σ₁) — orders below the
 * range finder's own error — with U orthonormal to working precision; when σ_k/σ₁ < 3e-4 (f32) or
 * 3e-3 (f64) V is re-orthonormalised and the nearly diagonal k×k core re-diagonalised by Jacobi, and
 * below 1e-6 the Jacobi route on R is used instead.
 * @throws RangeError when k is not an integer in 1…min(m,n) or A has NaN/infinite entries.
 * @example const { s, U, V } = randomizedSvd(image, 50, { seed: 1 });
 */
export function randomizedSvd(a: Matrix, k: number, opts: RandomizedSvdOptions = {}): RandomizedSvdResult {
  checkRank(a, k, 'randomizedSvd');
  const m = a.rows;
  const n = a.cols;
  const r = Math.min(m, n);
  const p = Math.max(0, Math.min(opts.oversample ?? DEFAULT_OVERSAMPLE, r - k));
  const q = opts.powerIters ?? defaultPowerIters(k + p, r);
  if (!Number.isInteger(q) || q < 0 || q > 50)
    throw new RangeError(`randomizedSvd: expected integer between 0 and 50 for powerIters but received ${q}`);
  const precision: Precision = opts.precision ?? (a.data instanceof Float32Array ? 'f32' : 'f64');
  const method = opts.method ?? 'power';
  const backend = opts.backend ?? defaultBackend();
  const l = k + p;
  const blocks = method === 'krylov' ? Math.max(1, Math.min(q + 1, Math.floor(r / l))) : 1;
  const f32 = precision === 'f32';
  let check: Check | null = null;
  if (opts.accuracy !== undefined) {
    const target = opts.accuracy;
    if (!(target > 1) || !Number.isFinite(target))
      throw new RangeError(
        `randomizedSvd: expected a finite number above 1 for accuracy but received ${target}`,
      );
    const maxQ = opts.maxPowerIters ?? Math.max(q, DEFAULT_MAX_POWER_ITERS);
    if (!Number.isInteger(maxQ) || maxQ < q || maxQ > 50)
      throw new RangeError(
        `randomizedSvd: expected integer between ${q} and 50 for maxPowerIters but received ${maxQ}`,
      );
    if (method === 'power' && q > 0) check = { target, maxQ, k, normA2: opts.frobeniusSquared };
  }
  const ws = backend.workspace(randomizedSvdBytes(m, n, k, l, blocks, f32));
  try {
    const reuse = opts.finish === 'reuse' && method === 'power' && q > 0;
    return core(ws, a, k, l, q, blocks, f32, opts.seed ?? DEFAULT_SEED, check, reuse);
  } catch (err) {
    // Non-finite input shows up as NaN in the first Gram matrix; scan only then (saves a pass over A).
    assertFinite(a);
    throw err;
  } finally {
    ws.release();
  }
}

/** Workspace bytes `core` allocates (elements listed in the order it allocates them). */
export function randomizedSvdBytes(
  m: number,
  n: number,
  k: number,
  l: number,
  blocks: number,
  f32: boolean,
): number {
  const L = l * blocks;
  const mx = Math.max(m, n);
  const pe =
    (f32 ? L * L : 0) +
    m * n +
    n * l +
    m * l +
    n * l +
    mx * L +
    L * L +
    (blocks > 1 ? m * L + L * l : 0) +
    n * L +
    L * k +
    m * k;
  const de =
    (f32 ? mx * L : 0) +
    5 * L * L +
    2 * n * L +
    16 * L * L +
    (f32 ? n * L + 5 * L * L : 0) +
    n * L +
    L * L +
    L * k +
    n * k +
    2 * l * l;
  return (f32 ? bytesFor(pe, de) : bytesFor(0, pe + de)) + jacobiBytes(L, L);
}

/** The accuracy check's settings (see RandomizedSvdOptions.accuracy). */
interface Check {
  target: number;
  maxQ: number;
  k: number;
  normA2?: number;
}

/** The accuracy check's settings (see RandomizedSvdOptions.accuracy). */
interface Check {
  target: number;
  maxQ: number;
  k: number;
  normA2?: number;
}

/**
 * Randomized subspace iteration, HMT 2011 Algorithm 4.4: starting from Y = AΩ, q rounds of
 * Z = orth(AᵀY), Y = orth(AZ). Intermediate bases need only be well conditioned (one Cholesky pass);
 * the last is made orthonormal. Leaves the m×l basis in Y. With `Ry`, the last Z is made orthonormal
 * too and Ry receives the R factor of AZ = Y·R (so σᵢ(AZ) = σᵢ(R), see `estimateRatio`).
 */
function powerBasis(o: RangeOps, Y: FloatArray, Z: FloatArray, q: number, Ry?: Float64Array): void {
  const { orth, mulA, mulAt, m, n, l } = o;
  orth.run(Y, m, l, undefined, q === 0);
  for (let it = 0; it < q; it++) {
    const last = it === q - 1;
    mulAt(Y, Z, l);
    orth.run(Z, n, l, undefined, last && Ry !== undefined);
    mulA(Z, Y, l);
    orth.run(Y, m, l, last ? Ry : undefined, last);
  }
}

/** ‖A‖²_F in f64. */
function frobeniusSquared(A: FloatArray, len: number): number {
  let s = 0;
  for (let i = 0; i < len; i++) s += A[i] * A[i];
  return s;
}

function core(
  ws: Workspace,
  a: Matrix,
  k: number,
  l: number,
  q: number,
  blocks: number,
  f32: boolean,
  seed: number,
  check: Check | null,
  reuse: boolean,
): RandomizedSvdResult {
  const m = a.rows;
  const n = a.cols;
  const L = l * blocks;
  const alloc = (len: number): FloatArray => (f32 ? ws.f32(len) : ws.f64(len));
  const A = alloc(m * n);
  A.set(a.data.subarray(0, m * n));
  const Om = alloc(n * l);
  const Y = alloc(m * l);
  const Z = alloc(n * l);
  const orth = new Orthonormalizer(ws, Math.max(m, n), L, f32);
  // Ziggurat deviates: ≈ 8 ns each against ≈ 44 ns for Box–Muller (measured user CPU, Node 20, this VM).
  fillNormalZiggurat(new Rng(seed), Om);
  // Products with A (m×n, row-major): A·X uses (rsA, csA) = (n, 1); Aᵀ·X uses (1, n).
  const mulA = (X: FloatArray, out: FloatArray, w: number) =>
    ws.gemm(m, w, n, A, 0, n, 1, X, 0, w, out, 0, w, false);
  const mulAt = (X: FloatArray, out: FloatArray, w: number) =>
    ws.gemm(n, w, m, A, 0, 1, n, X, 0, w, out, 0, w, false);
  const ops: RangeOps = { ws, orth, mulA, mulAt, alloc, m, n, l, A };
  mulA(Om, Y, l);
  if (reuse) {
    const c = check && { ...check, normA2: check.normA2 ?? frobeniusSquared(A, m * n) };
    return reuseSvd(ops, Y, Z, q, k, f32, c);
  }
  const Ry = check ? ws.f64(l * l) : undefined;
  if (blocks === 1) powerBasis(ops, Y, Z, q, Ry);
  const Qm = blocks === 1 ? Y : blockKrylovBasis(ops, Y, Z, blocks);
  if (!check || !Ry)
    return { ...project(ws, orth, A, Qm, m, n, k, L, f32, alloc), powerIters: q, ratioEstimate: Number.NaN };
  // Accuracy check (see estimateRatio): project, estimate; while the estimate is above the target,
  // run one more power step from the projection's own AᵀQ and project again in the same space.
  const normA2 = check.normA2 ?? frobeniusSquared(A, m * n);
  for (let it = q; ; it++) {
    const ey = squaredSingularValues(Ry, l);
    const mark = ws.mark?.();
    const res = project(ws, orth, A, Qm, m, n, k, L, f32, alloc, Z);
    const ratio = estimateRatio(ey, res.s, l, k, normA2);
    if (ratio <= check.target || it >= check.maxQ || mark === undefined || !ws.reset)
      return { ...res, powerIters: it, ratioEstimate: ratio };
    ws.reset(mark);
    // Z holds AᵀQ: the next step's first half, already computed.
    orth.run(Z, n, l, undefined, true);
    mulA(Z, Y, l);
    orth.run(Y, m, l, Ry, true);
  }
}
