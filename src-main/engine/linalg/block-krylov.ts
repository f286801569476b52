/**
 * Block Krylov range finder for the randomized SVD (the `method: 'krylov'` option of randomizedSvd).
 *
 * References
 * - C. Musco, C. Musco, "Randomized block Krylov methods for stronger and faster approximate singular
 *   value decomposition", NeurIPS 2015 (arXiv:1504.05477). Algorithm 2: K = [AΠ, (AAᵀ)AΠ, …,
 *   (AAᵀ)^q AΠ], Q = orth(K), then the SVD of QᵀA restricted to the top k.
 * - L. Giraud, J. Langou, M. Rozložník, "The loss of orthogonality in the Gram–Schmidt orthogonalization
 *   process", Comput. Math. Appl. 50:1069–1075, 2005 (citation from memory, DOI not checked) ("twice is enough"
 *   for classical Gram–Schmidt, used here block-wise).
 */
import type { FloatArray } from './matrix';
import type { Orthonormalizer } from './qr';
import type { Workspace } from './workspace';

/** What a range finder needs from randomized-svd.ts: products with A and Aᵀ, QR, allocation. */
export interface RangeOps {
  ws: Workspace;
  orth: Orthonormalizer;
  mulA(X: FloatArray, out: FloatArray, w: number): void;
  mulAt(X: FloatArray, out: FloatArray, w: number): void;
  alloc(len: number): FloatArray;
  m: number;
  n: number;
  l: number;
  /** A itself (m×n, row-major, in the workspace). */
  A: FloatArray;
}

/** Gram–Schmidt passes projecting each new block off the earlier ones (twice is enough). */
const CGS_PASSES = 2;

/**
 * K = [Y₀ … Y_{b−1}] (m×(b·l)) with Y₀ = orth(AΩ) given in Y, and Y_j = orth((I − K_{<j}K_{<j}ᵀ)·A·orth(AᵀY_{j−1})).
 * Each block is orthonormalised and projected off the previous ones; the whole K once more at the end.
 * Returns the orthonormal m×(b·l) basis.
 */
export function blockKrylovBasis(o: RangeOps, Y: FloatArray, Z: FloatArray, blocks: number): FloatArray {
  const { ws, orth, mulA, mulAt, alloc, m, n, l } = o;
  const L = l * blocks;
  const K = alloc(m * L);
  const C = alloc(L * l);
  orth.run(Y, m, l);
  const put = (blk: number) => {
    for (let i = 0; i < m; i++) K.set(Y.subarray(i * l, (i + 1) * l), i * L + blk * l);
  };
  put(0);
  for (let blk = 1; blk < blocks; blk++) {
    mulAt(Y, Z, l);
    orth.run(Z, n, l, undefined, false);
    mulA(Z, Y, l);
    const w = blk * l;
    for (let pass = 0; pass < CGS_PASSES; pass++) {
      ws.gemm(w, l, m, K, 0, 1, L, Y, 0, l, C, 0, l, false);
      for (let i = 0; i < w * l; i++) C[i] = -C[i];
      ws.gemm(m, l, w, K, 0, L, 1, C, 0, l, Y, 0, l, true);
    }
    orth.run(Y, m, l);
    put(blk);
  }
  orth.run(K, m, L);
  return K;
}
