/**
 * Thin QR factorisations of tall m×l blocks: CholeskyQR2 (with a shifted first pass and extra passes
 * when needed) on the fast product kernel, with Householder QR (householder-qr.ts) as the fallback for
 * rank-deficient or very ill-conditioned blocks.
 *
 * References
 * - T. Fukaya, Y. Nakatsukasa, Y. Yanagisawa, Y. Yamamoto, "CholeskyQR2: a simple and
 *   communication-avoiding algorithm for computing a tall-skinny QR factorization", ScalA 2014, IEEE.
 *   doi:10.1109/ScalA.2014.11 (DOI from memory). §3: two passes give orthogonality O(u) when u·κ(X)² ≲ 1.
 * - T. Fukaya, R. Kannan, Y. Nakatsukasa, Y. Yamamoto, Y. Yanagisawa, "Shifted Cholesky QR for
 *   computing the QR factorization of ill-conditioned matrices", SIAM J. Sci. Comput. 42(1):A477–A503,
 *   2020. doi:10.1137/18M1218212. §3, shift s = 11(ml + l(l+1))·u·‖X‖₂² (we use ‖X‖_F² ≥ ‖X‖₂²).
 * The Cholesky factor is cholesky.ts `choleskyUpper`; the Householder fallback is householder-qr.ts.
 */
import { choleskyUpper } from './cholesky';
import { householderInPlace } from './householder-qr';
import type { FloatArray } from './matrix';
import type { Workspace } from './workspace';

/** Unit roundoff of float64 and float32. */
const U64 = 2 ** -53;
const U32 = 2 ** -24;
/** ‖QᵀQ − I‖_max below this means one more Cholesky pass gives full working-precision orthogonality (κ ≤ √3). */
const ACCEPT_DEVIATION = 0.5;
/** Cholesky passes before giving up and calling Householder (CholeskyQR2 needs 2, shifted CholeskyQR3 needs 3). */
const MAX_PASSES = 4;

/** Scratch buffers for repeated QR of blocks up to maxM×maxL, allocated once from a workspace. */
export class Orthonormalizer {
  private readonly Yd: Float64Array | null;
  private readonly T: FloatArray;
  private readonly Ri: FloatArray;
  private readonly G: Float64Array;
  private readonly Rc: Float64Array;
  private readonly Rinv: Float64Array;
  private readonly Rt: Float64Array;
  private readonly Gw: Float32Array | null;
  /** How many calls ended in the Householder fallback (diagnostics for tests and the bench). */
  householderCalls = 0;
  constructor(
    private readonly ws: Workspace,
    maxM: number,
    maxL: number,
    f32: boolean,
  ) {
    this.Yd = f32 ? ws.f64(maxM * maxL) : null;
    this.T = f32 ? ws.f32(maxM * maxL) : ws.f64(maxM * maxL);
    this.Ri = f32 ? ws.f32(maxL * maxL) : ws.f64(maxL * maxL);
    this.G = ws.f64(maxL * maxL);
    this.Rc = ws.f64(maxL * maxL);
    this.Rinv = ws.f64(maxL * maxL);
    this.Rt = ws.f64(maxL * maxL);
    this.Gw = f32 ? ws.f32(maxL * maxL) : null;
  }
  /** See `orthonormalize`. */
  run(Y: FloatArray, m: number, l: number, R?: Float64Array, final = true): 'cholesky' | 'householder' {
    const r = orthonormalizeWith(this.ws, this, Y, m, l, R, final);
    if (r === 'householder') this.householderCalls++;
    return r;
  }
  /** @internal */ scratch() {
    return {
      Yd: this.Yd,
      T: this.T,
      Ri: this.Ri,
      G: this.G,
      Rc: this.Rc,
      Rinv: this.Rinv,
      Rt: this.Rt,
      Gw: this.Gw,
    };
  }
}

/**
 * Replace the m×l row-major block Y (m ≥ l) by an orthonormal basis Q of its range, Y = Q·R.
 * When `R` (l×l, f64, row-major) is given it receives the upper-triangular factor.
 * Runs CholeskyQR2 (Gram matrix in f64 even for f32 blocks); a Cholesky breakdown triggers the
 * shifted variant; if passes do not converge (numerically rank-deficient Y) it falls back to Householder.
 * @returns the method that finished: 'cholesky' or 'householder'.
 */
export function orthonormalize(
  ws: Workspace,
  Y: FloatArray,
  m: number,
  l: number,
  R?: Float64Array,
): 'cholesky' | 'householder' {
  return new Orthonormalizer(ws, m, l, Y instanceof Float32Array).run(Y, m, l, R);
}

/** Row block of the Gram product: only the upper block triangle is formed, then mirrored. */
const GRAM_BLOCK = 64;

/** G = YᵀY (l×l) for the m×l block Y, same precision. */
function gram<T extends FloatArray>(ws: Workspace, Y: T, m: number, l: number, G: T): void {
  for (let i0 = 0; i0 < l; i0 += GRAM_BLOCK) {
    const ni = Math.min(GRAM_BLOCK, l - i0);
    ws.gemm(ni, l - i0, m, Y, i0, 1, l, Y, i0, l, G, i0 * l + i0, l, false);
  }
  for (let i = 1; i < l; i++)
    for (let j = 0; j < Math.min(i, Math.floor(i / GRAM_BLOCK) * GRAM_BLOCK); j++)
      G[i * l + j] = G[j * l + i];
}

function orthonormalizeWith(
  ws: Workspace,
  o: Orthonormalizer,
  Y: FloatArray,
  m: number,
  l: number,
  R?: Float64Array,
  final = true,
): 'cholesky' | 'householder' {
  if (l === 0) return 'cholesky';
  if (m < l) throw new RangeError(`orthonormalize needs rows ≥ columns, got ${m}×${l}`);
  const f32 = Y instanceof Float32Array;
  const u = f32 ? U32 : U64;
  const sc = o.scratch();
  const Yd = sc.Yd ? sc.Yd.subarray(0, m * l) : null;
  const T = sc.T.subarray(0, m * l);
  const Ri = sc.Ri;
  const { G, Rc, Rinv, Rt } = sc;
  if (R) {
    R.fill(0);
    for (let i = 0; i < l; i++) R[i * l + i] = 1;
  }
  let shifted = false;
  for (let pass = 0; pass < MAX_PASSES; pass++) {
    // Gram matrix G = YᵀY in f64 (conversion f32 → f64 is exact).
    // Later passes see a nearly orthonormal block, whose Gram matrix is well conditioned: working precision suffices.
    // Not after a shifted pass: that block can still be ill-conditioned enough to break an f32 Gram matrix.
    // uG: unit roundoff of the Gram matrix actually formed (f64 from exactly converted f32 samples,
    // or f32 on later passes); the Cholesky breakdown floor and the shift use it, not the block's u.
    let uG = u;
    if (Yd && pass > 0 && sc.Gw && !shifted) {
      gram(ws, Y as Float32Array, m, l, sc.Gw);
      for (let i = 0; i < l * l; i++) G[i] = sc.Gw[i];
    } else if (Yd) {
      uG = U64;
      Yd.set(Y.subarray(0, m * l));
      gram(ws, Yd, m, l, G);
    } else gram(ws, Y as Float64Array, m, l, G);
    let dev = 0;
    let frob = 0;
    for (let i = 0; i < l; i++)
      for (let j = 0; j < l; j++) {
        const g = G[i * l + j];
        dev = Math.max(dev, Math.abs(g - (i === j ? 1 : 0)));
        if (i === j) frob += g;
      }
    if (!Number.isFinite(frob)) throw new RangeError('orthonormalize: block contains NaN or infinity');
    let shift = 0;
    if (pass === 0 && shifted) shift = 11 * (m * l + l * (l + 1)) * uG * frob;
    if (!choleskyUpper(G, l, shift, Rc, uG, ws)) {
      if (pass === 0 && !shifted) {
        shifted = true;
        pass = -1;
        continue;
      }
      householderInPlace(Y, m, l, R);
      return 'householder';
    }
    if (!ws.invertUpper?.(Rc, l, Rinv)) invertUpper(Rc, l, Rinv);
    for (let i = 0; i < l * l; i++) Ri[i] = Rinv[i];
    ws.gemm(m, l, l, Y, 0, l, 1, Ri, 0, l, T, 0, l, false);
    Y.set(T, 0);
    if (R) {
      // R ← Rc·R (both upper triangular), row by row: row i = Σ_{p ≥ i} Rc[i,p]·R[p,:] (contiguous rows).
      Rt.fill(0);
      for (let i = 0; i < l; i++) {
        const ri = i * l;
        for (let p = i; p < l; p++) {
          const c = Rc[ri + p];
          if (c === 0) continue;
          const rp = p * l;
          for (let j = p; j < l; j++) Rt[ri + j] += c * R[rp + j];
        }
      }
      R.set(Rt.subarray(0, l * l));
    }
    if (dev < ACCEPT_DEVIATION && !(shift > 0)) return 'cholesky';
    // Intermediate power-iteration steps need a well-conditioned basis, not one orthonormal to the last bit.
    if (!final && !(shift > 0)) return 'cholesky';
  }
  householderInPlace(Y, m, l, R);
  return 'householder';
}

/** Inverse of an upper-triangular l×l matrix, bottom row first: X[i,:] = (e_i − Σ_{p>i} R[i,p]·X[p,:]) / R[i,i]. */
function invertUpper(Rc: Float64Array, l: number, out: Float64Array): void {
  out.fill(0);
  for (let i = l - 1; i >= 0; i--) {
    const ri = i * l;
    out[ri + i] = 1;
    for (let p = i + 1; p < l; p++) {
      const c = Rc[ri + p];
      if (c === 0) continue;
      const rp = p * l;
      for (let j = p; j < l; j++) out[ri + j] -= c * out[rp + j];
    }
    const inv = 1 / Rc[ri + i];
    for (let j = i; j < l; j++) out[ri + j] *= inv;
  }
}
