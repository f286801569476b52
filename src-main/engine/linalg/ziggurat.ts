/**
 * Standard normal deviates by the ziggurat method: the Gaussian test matrix of the randomized SVD
 * (randomized-svd.ts). About 99 % of the deviates cost one 32-bit integer, a table look-up, a comparison
 * and a multiplication; Box–Muller (random.ts `Rng.normal`) costs a logarithm, a square root, a sine or
 * cosine and two 53-bit uniforms per deviate. The 32-bit integers come from `Rng` (xoshiro128**), not from
 * the paper's SHR3, whose short period is the flaw Leong et al. (2005) point out.
 *
 * References
 * - G. Marsaglia, W. W. Tsang, "The ziggurat method for generating random variables", Journal of
 *   Statistical Software 5(8), 2000. doi:10.18637/jss.v005.i08. The 128-layer normal case: `RNOR`,
 *   `nfix` and the table set-up `zigset` with r = 3.442619855899 and v = 9.91256303526217e-3
 *   (the area of each layer), as printed in the paper's C code.
 * - P. H. W. Leong, G. Zhang, D.-U. Lee, W. Luk, J. D. Villasenor, "A comment on the implementation of
 *   the ziggurat method", Journal of Statistical Software 12(7), 2005. doi:10.18637/jss.v012.i07
 *   (DOIs from memory).
 */
import type { FloatArray } from './matrix';
import type { Rng } from './random';

/** Layers of the ziggurat (the paper's normal case). */
const LAYERS = 128;
/** x-coordinate where the base strip's tail starts (Marsaglia & Tsang 2000, `zigset`). */
const R = 3.442619855899;
/** Area of every layer, base strip plus tail (Marsaglia & Tsang 2000, `zigset`). */
const V = 9.91256303526217e-3;
/** Scale of the signed 32-bit integers: |hz| < 2³¹. */
const M1 = 2147483648;

interface Tables {
  /** Accept |hz| < kn[i] without a further test (the layer's rectangle lies under the curve). */
  kn: Float64Array;
  /** x = hz·wn[i]. */
  wn: Float64Array;
  /** f(xᵢ) = exp(−xᵢ²/2) at the layer edges. */
  fn: Float64Array;
}

let tables: Tables | null = null;

/** The paper's `zigset` for the normal density (in f64). */
function zigTables(): Tables {
  if (tables) return tables;
  const kn = new Float64Array(LAYERS);
  const wn = new Float64Array(LAYERS);
  const fn = new Float64Array(LAYERS);
  let dn = R;
  let tn = dn;
  const q = V / Math.exp(-0.5 * dn * dn);
  kn[0] = (dn / q) * M1;
  kn[1] = 0;
  wn[0] = q / M1;
  wn[LAYERS - 1] = dn / M1;
  fn[0] = 1;
  fn[LAYERS - 1] = Math.exp(-0.5 * dn * dn);
  for (let i = LAYERS - 2; i >= 1; i--) {
    dn = Math.sqrt(-2 * Math.log(V / dn + Math.exp(-0.5 * dn * dn)));
    kn[i + 1] = (dn / tn) * M1;
    tn = dn;
    fn[i] = Math.exp(-0.5 * dn * dn);
    wn[i] = dn / M1;
  }
  tables = { kn, wn, fn };
  return tables;
}

/** The paper's `nfix`: the slow path for a rejected (hz, iz). */
function slowNormal(rng: Rng, t: Tables, hz: number, iz: number): number {
  for (;;) {
    const x = hz * t.wn[iz];
    if (iz === 0) {
      // The tail beyond R (Marsaglia 1964, as in the paper): x = −ln(U₁)/R, accepted when −2·ln(U₂) ≥ x².
      let tx: number;
      let ty: number;
      do {
        tx = -Math.log(rng.uniform()) / R;
        ty = -Math.log(rng.uniform());
      } while (ty + ty < tx * tx);
      return hz > 0 ? R + tx : -R - tx;
    }
    if (t.fn[iz] + rng.uniform() * (t.fn[iz - 1] - t.fn[iz]) < Math.exp(-0.5 * x * x)) return x;
    hz = rng.nextU32() | 0;
    iz = hz & (LAYERS - 1);
    if (Math.abs(hz) < t.kn[iz]) return hz * t.wn[iz];
  }
}

/**
 * Fill out[start…end) with standard normal deviates from `rng` by the ziggurat method (the paper's
 * `RNOR`). Deterministic for a given `rng` state; a different sequence from `rng.fillNormal`.
 * @example fillNormalZiggurat(new Rng(1), omega);
 */
export function fillNormalZiggurat(rng: Rng, out: FloatArray, start = 0, end = out.length): void {
  const t = zigTables();
  const { kn, wn } = t;
  for (let i = start; i < end; i++) {
    const hz = rng.nextU32() | 0;
    const iz = hz & (LAYERS - 1);
    out[i] = Math.abs(hz) < kn[iz] ? hz * wn[iz] : slowNormal(rng, t, hz, iz);
  }
}
