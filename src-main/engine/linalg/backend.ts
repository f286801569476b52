/**
 * The one interface behind which the WebAssembly kernels (wasm/assembly/kernels.ts) and their TypeScript
 * forms (gemm-ts.ts, and each factorisation's own TS loops) sit: a `Backend` hands out `Workspace`s, and
 * a workspace allocates arrays, runs `gemm` on them, and may offer kernel versions of the factorisation
 * steps. An optional kernel that cannot run returns its "cannot run" value and the caller runs the TS
 * form, which performs the same operations in the same order. Implementations: workspace.ts (TS and
 * WebAssembly backends) and src-main/node/parallel (two worker threads over shared memory).
 */
import type { FloatArray } from './matrix';

/**
 * C[m×n] (+)= A(m×k)·B[k×n] on arrays of one precision. A(i,p) = a[aOff + i·rsA + p·csA]; B and C are
 * row-major from bOff / cOff with leading dimensions ldb / ldc. `accumulate` adds to C instead of overwriting.
 */
export type Gemm = <T extends FloatArray>(
  m: number,
  n: number,
  k: number,
  a: T,
  aOff: number,
  rsA: number,
  csA: number,
  b: T,
  bOff: number,
  ldb: number,
  c: T,
  cOff: number,
  ldc: number,
  accumulate: boolean,
) => void;

export interface Workspace {
  f32(n: number): Float32Array;
  f64(n: number): Float64Array;
  gemm: Gemm;
  /**
   * Optional fast one-sided Jacobi sweeps (see jacobi-svd.ts) on arrays from this workspace:
   * W holds n contiguous columns of length `rows`, Vt (n×n) receives the rotations (or null).
   * Returns the sweeps used, or -1 when the arrays are not kernel-visible (caller falls back to TS).
   */
  jacobi?(
    W: Float64Array,
    rows: number,
    n: number,
    Vt: Float64Array | null,
    tol: number,
    maxSweeps: number,
    floor2: number,
    norms: Float64Array,
  ): number;
  /**
   * Optional fast Householder tridiagonalisation (symmetric-eigen.ts `tridiagonalize`) on arrays from
   * this workspace; v and p are 2n-element scratch. Returns false when it cannot run (caller uses TS).
   */
  tridiag?(
    S: Float64Array,
    n: number,
    d: Float64Array,
    e: Float64Array,
    v: Float64Array,
    p: Float64Array,
  ): boolean;
  /**
   * Optional fast symmetric eigen-decomposition (symmetric-eigen.ts `symmetricEigen` steps) of the
   * lower-stored n×n S (overwritten) from this workspace: d (n) receives the eigenvalues unsorted, row
   * i of Et (n×n) the eigenvector of d[i]. Takes 6n f64 scratch from the workspace. Returns false when
   * it cannot run (caller uses TS); throws when the QL iteration does not converge.
   */
  symEigen?(S: Float64Array, n: number, d: Float64Array, Et: Float64Array): boolean;
  /**
   * Optional kernel versions of cholesky.ts `choleskyUpper` (lower factor into L; 1 ok, 0 breakdown, -1 cannot
   * run) and `invertUpper` (false: cannot run). Same operations in the same order: bit-identical.
   */
  choleskyLower?(G: Float64Array, l: number, shift: number, floor: number, L: Float64Array): number;
  invertUpper?(R: Float64Array, l: number, out: Float64Array): boolean;
  /**
   * Optional: a mark of the allocation pointer; `reset(mark)` frees everything allocated after it
   * (views taken since must not be used again). Lets an algorithm repeat a stage in the same space.
   */
  mark?(): number;
  reset?(mark: number): void;
  /** Return the space to the backend. Views must not be used afterwards. */
  release(): void;
  /** Short label for diagnostics and the bench ("wasm", "ts", "2 workers"). */
  readonly label: string;
}

export interface Backend {
  /** A workspace able to hold `bytes` bytes of arrays (allocate with some slack for alignment). */
  workspace(bytes: number): Workspace;
  /**
   * Optional: grow the backend's memory to hold a workspace of `bytes` and write to every page of it,
   * so that a later computation of that size pays no memory growth or first-touch page faults.
   */
  reserve?(bytes: number): void;
  readonly label: string;
}
