/**
 * The randomized SVD's "reuse" finish (randomizedSvd option `finish: 'reuse'`): no product for B = QᵀA.
 * After q ≥ 1 power steps the last right basis Z (n×l, orthonormal) and A·Z = Q·R_y are at hand, and
 * A·Z·Zᵀ = Q·R_y·Zᵀ is the best rank-l approximation of A with rows in span(Z). This is HMT 2011
 * Algorithms 4.4 + 5.1 run on Aᵀ — whose closing product Bᵀ = A·Z is the last power half-step here — so
 * the rank-k factors come from the SVD of the small R_y = U_R·Σ·V_Rᵀ: U = Q·U_R, V = Z·V_R, with
 * uᵢᵀ·A·vᵢ = σᵢ exactly, hence ‖A − A_k‖²_F = ‖A‖²_F − Σ_{i≤k} σᵢ².
 *
 * Cost and accuracy, measured on the bench plane (camera.png resized to 2000×1500, k = 50, l = 72, q = 2,
 * f64, .scratch experiment of 2026-12-03): 5 products with A instead of 6, error 1.0029× the Eckart–Young
 * optimum against 1.0010× for the projection finish; l = 64 with the projection (6 products of 64
 * columns, more flops than 5 of 72) gives 1.0035×.
 *
 * Reference: N. Halko, P.-G. Martinsson, J. A. Tropp, "Finding structure with randomness", SIAM Review
 * 53(2):217–288, 2011, doi:10.1137/090771806, Alg. 4.4 and 5.1.
 */
import { estimateRatio, squaredSingularValues } from './accuracy-estimate';
import type { RangeOps } from './block-krylov';
import { jacobiSvdIn } from './jacobi-svd';
import type { FloatArray, SvdResult } from './matrix';
import { takeOutput } from './output-arrays';

/** The accuracy check's settings (randomizedSvd option `accuracy`), with ‖A‖²_F known. */
interface ReuseCheck {
  target: number;
  maxQ: number;
  normA2: number;
}

/**
 * Subspace iteration from Y = A·Ω (HMT Alg. 4.4, q ≥ 1 steps of Z = orth(AᵀY), Y = orth(AZ)), then the
 * reuse finish. With `check`, the estimate compares the captured energy of the last two half-steps
 * (σ(AᵀY_{q−1}) from R_z, σ(AZ) from R_y; both bases orthonormal for it) and, while it is above the
 * target, runs one more step (2 products) up to `maxQ` steps.
 */
export function reuseSvd(
  o: RangeOps,
  Y: FloatArray,
  Z: FloatArray,
  q: number,
  k: number,
  f32: boolean,
  check: ReuseCheck | null,
): SvdResult & { powerIters: number; ratioEstimate: number } {
  const { ws, orth, mulA, mulAt, m, n, l } = o;
  const Ry = ws.f64(l * l);
  const Rz = ws.f64(l * l);
  const step = (lastY: boolean, lastZ: boolean, yBeforeLast: boolean) => {
    mulAt(Y, Z, l);
    orth.run(Z, n, l, lastZ && check ? Rz : undefined, lastZ);
    mulA(Z, Y, l);
    orth.run(Y, m, l, lastY ? Ry : undefined, lastY || (yBeforeLast && check !== null));
  };
  // Y_{q−1} (the basis the last Z comes from) is made orthonormal when the check needs σ(AᵀY_{q−1}).
  orth.run(Y, m, l, undefined, q === 1 && check !== null);
  for (let it = 0; it < q; it++) step(it === q - 1, it === q - 1, it === q - 2);
  for (let it = q; ; it++) {
    const mark = ws.mark?.();
    const res = finish(o, Y, Z, Ry, k, f32);
    if (!check) return { ...res, powerIters: it, ratioEstimate: Number.NaN };
    const ratio = estimateRatio(squaredSingularValues(Rz, l), res.s, l, k, check.normA2);
    if (ratio <= check.target || it >= check.maxQ || mark === undefined || !ws.reset)
      return { ...res, powerIters: it, ratioEstimate: ratio };
    ws.reset(mark);
    step(true, true, false);
  }
}

/** Rank-k factors from A·Z = Q·R_y: Jacobi SVD of the l×l R_y, then U = Q·U_R and V = Z·V_R. */
function finish(
  o: RangeOps,
  Q: FloatArray,
  Z: FloatArray,
  Ry: Float64Array,
  k: number,
  f32: boolean,
): SvdResult {
  const { ws, alloc, m, n, l } = o;
  const small = jacobiSvdIn({ rows: l, cols: l, data: Ry }, ws);
  const Uk = alloc(l * k);
  const Vk = alloc(l * k);
  const uc = small.U.cols;
  const vc = small.V.cols;
  for (let i = 0; i < l; i++)
    for (let j = 0; j < k; j++) {
      Uk[i * k + j] = small.U.data[i * uc + j];
      Vk[i * k + j] = small.V.data[i * vc + j];
    }
  const U = alloc(m * k);
  ws.gemm(m, k, l, Q, 0, l, 1, Uk, 0, k, U, 0, k, false);
  const V = alloc(n * k);
  ws.gemm(n, k, l, Z, 0, l, 1, Vk, 0, k, V, 0, k, false);
  const Uout = takeOutput(m * k, f32);
  const Vout = takeOutput(n * k, f32);
  Uout.set(U);
  Vout.set(V);
  return {
    s: Float64Array.from(small.s.subarray(0, k)),
    U: { rows: m, cols: k, data: Uout },
    V: { rows: n, cols: k, data: Vout },
  };
}
