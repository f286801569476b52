/**
 * Factor the planes of a decoded scan for the page: σ, U, V of each plane up to a rank, packed once
 * in the contract's factor-set layout (src-main/contract/api.ts). Runs inside a worker thread.
 *
 * Factors come from the engine's randomizedSvd (Halko, Martinsson, Tropp, "Finding structure with
 * randomness", SIAM Review 53(2):217–288, 2011, doi:10.1137/090771806, Algorithm 4.4) with the CLI's
 * whole-plane settings (engine/lowrank/factorise.ts `planeSvdOptions`: f32 SIMD products, q = 2 power
 * steps plus the 1.01× accuracy check) on the thread pool that `readyEngine` registers — so the page's
 * factors are the ones `rankfold compress --tile 0` computes.
 */
import { type DecodedImage, encodeFactorSet, type FactorArrays } from '../../contract';
import type * as linalg from '../../engine/linalg';
import { randomizedSvd } from '../../engine/linalg';
import { planeSvdOptions } from '../../engine/lowrank/factorise';
import { prepareFactorPath } from '../parallel/factor-path';

export type ProgressFn = (done: number, total: number, stage: string) => void;

interface PlaneSvd {
  s: Float64Array;
  /** k×m, vector i contiguous. */
  ut: Float32Array;
  /** k×n, vector i contiguous. */
  vt: Float32Array;
}

let engineReady: Promise<unknown> | undefined;
/**
 * Compile the kernels, start the thread pool and warm both up, once per thread (factor-path.ts); without
 * WebAssembly the factorisation runs on the TypeScript products.
 */
export function readyEngine(): Promise<unknown> {
  engineReady ??= prepareFactorPath().catch(() => undefined);
  return engineReady;
}

/** Truncated SVD of one m×n plane (row-major f32) to rank k, with the engine's randomized SVD. */
function planeSvd(
  plane: Float32Array,
  m: number,
  n: number,
  k: number,
  energy: number,
  seed = 1,
  powerIters?: number,
): PlaneSvd {
  const r = Math.min(k, m, n);
  const res = randomizedSvd(
    { rows: m, cols: n, data: plane },
    r,
    planeSvdOptions(r, Math.min(m, n), { seed, energy, powerIters }),
  );
  return {
    s: Float64Array.from(res.s.subarray(0, r)),
    ut: columnsToRows(res.U, r),
    vt: columnsToRows(res.V, r),
  };
}

function columnsToRows(a: linalg.Matrix, k: number): Float32Array {
  const out = new Float32Array(k * a.rows);
  const { rows, cols, data } = a;
  for (let i = 0; i < rows; i++) {
    const o = i * cols;
    for (let c = 0; c < k; c++) out[c * rows + i] = data[o + c];
  }
  return out;
}

/** Factor every plane to `maxRank` and pack σ, U, V and the source planes. */
export function factorScan(
  img: DecodedImage,
  maxRank: number,
  onProgress?: ProgressFn,
  powerIters?: number,
): Uint8Array {
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
    const svd = planeSvd(plane, m, n, k, e, 1 + c, powerIters);
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
