/**
 * Whether a correlated-noise spectrum is seen in the flat blocks it was read from: noise holds every block up
 * to its own level, smooth content does not.
 *
 * Why. The spectrum (noise-psd.ts) is read from the flattest 16×16 blocks of the scan. On a scan with no noise
 * above rounding level but smooth shading, mottle or compression blocking in its flat parts, those blocks
 * hold a low-pass signal that looks like filtered noise on every single-scale test: scikit-image's coins.png
 * (the sky behind the coins carries 8×8 blocking) measured flatness 0.14, high-frequency share 0.17 and Haar
 * σ̂ ratios between scales close to those of a 3×3 binomial kernel, and was "denoised" at σ 2.5.
 *
 * The test. Noise is stationary: for noise of autocovariance r, a block's plane-fit residual variance v is a
 * quadratic form of Gaussian samples, v = eᵀ·e / B² with e = (I − P)·x (P the plane projector, x the block's
 * samples of covariance R, built from r). Its distribution is close to a scaled χ² with
 * k = tr(R_M)² / tr(R_M²) degrees of freedom, R_M = (I − P)·R·(I − P) (moment matching; F. E. Satterthwaite,
 * "An approximate distribution of estimates of variance components", Biometrics Bulletin 2(6):110–114, 1946).
 * So among noise blocks a share FLOOR_SHARE lies below the floor q_FLOOR_SHARE / q_QUARTILE times their lower
 * quartile (χ²ₖ quantiles by the Wilson–Hilferty approximation: E. B. Wilson, M. M. Hilferty, PNAS
 * 17(12):684–688, 1931). The level is read at the lower quartile, not the mean, because the flat blocks also
 * hold some content (up to KEEP_RATIO times their mean, noise-psd.ts), which raises the upper blocks most:
 * referred to their mean, white noise of σ 5 on camera.png put 3.2 % of its blocks below the 1 % floor; to
 * their lower quartile, 1.8 %. Content does not hold blocks up: its flattest blocks are far quieter than its
 * typical flat block. With n flat blocks and m below the floor, the spectrum is taken as content when m is
 * improbable for noise: P(Binomial(n, FLOOR_SHARE) ≥ m) < FLOOR_ALPHA.
 *
 * Few blocks leave the test blind (with n = 10 it needs m = 3): scikit-image's microaneurysms.png, 102×102 with
 * 10 flat blocks of tissue texture, still reads as correlated noise of σ 3.0. Asking for at least 40 tested
 * blocks (m(40) = 4 = 10 %, content's rate) was measured and dropped: with the blocks near a clip level left
 * out it took 12 of 132 noisy cases on 22 scikit-image images (page.png with binomial σ 5 and 10 among them)
 * from correlated to white or untouched; counted before that, it would still drop ihc.png with binomial σ 5
 * (16 flat blocks) and microaneurysms.png with noise added.
 *
 * Measured on the design half of scikit-image's images (coins, camera, moon, text, astronaut, cell, chelsea,
 * horse; clean, and with 3×3 binomial σ 5, 10, 5×5 Gaussian σ 10 and white σ 5 noise): noise put 0–1.8 % of its
 * flat blocks below the floor (largest count 12 of 937, moon.png Gaussian σ 10); clean coins 6 of 48, text 5 of
 * 52, moon 36 of 446, camera 12 of 243.
 */
import { BLOCK, type NoisePsd, PSD_LAG, planeBasis } from './noise-psd';

/** Share of noise blocks below the floor: the floor is the χ²ₖ quantile at this probability (chosen here). */
const FLOOR_SHARE = 0.01;
/** Standard normal quantile at FLOOR_SHARE (Φ⁻¹(0.01) = −2.3263, common tables). */
const FLOOR_Z = -2.3263;
/** The blocks' level is read at this quantile of their variances: content added to noise shifts it least. */
const QUARTILE = 0.25;
/** Standard normal quantile at QUARTILE (Φ⁻¹(0.25) = −0.6745, common tables). */
const QUARTILE_Z = -0.6745;
/**
 * Blocks closer than this many noise standard deviations to a clip level in any channel are left out of the
 * test (chosen here: at 3σ, 0.13 % of the noise is clipped). Found on the check half, not the design half:
 * without it, coffee.png with binomial noise σ 5 and 10 (quiet blocks in the dark coffee, luma 14, where R, G
 * and B clip at 0), motorcycle_right.png σ 5 and ihc.png σ 10 (bright areas) read as content.
 */
const CLIP_MARGIN = 3;
/** Below this binomial tail probability the quiet blocks are not noise (chosen here). */
const FLOOR_ALPHA = 1e-3;

/** What the flat blocks say about a measured spectrum. */
export interface FloorTest {
  /** Flat blocks tested. */
  blocks: number;
  /** Of them, below the floor. */
  below: number;
  /** The floor as a share of the blocks' lower-quartile variance. */
  floor: number;
  /** Degrees of freedom of one block's variance under the noise (k). */
  dof: number;
  /** P(Binomial(blocks, FLOOR_SHARE) ≥ below). */
  p: number;
  /** p < FLOOR_ALPHA: the quiet blocks are content, not noise. */
  content: boolean;
}

/** k = tr(R_M)² / tr(R_M²) for one B×B block of noise with autocovariance `autocov` (lags up to L per axis). */
export function blockDegrees(autocov: Float64Array, L: number, B = BLOCK): number {
  const N = B * B;
  const side = 2 * L + 1;
  // R[i, j] = r(yj − yi, xj − xi), zero beyond the measured lags.
  const R = new Float64Array(N * N);
  for (let i = 0; i < N; i++) {
    const yi = Math.floor(i / B);
    const xi = i % B;
    for (let j = 0; j < N; j++) {
      const dy = Math.floor(j / B) - yi;
      const dx = (j % B) - xi;
      if (Math.abs(dy) <= L && Math.abs(dx) <= L) R[i * N + j] = autocov[(dy + L) * side + dx + L];
    }
  }
  // A = (I − P)·R with P = Q·Qᵀ; tr(R_M) = tr(A), tr(R_M²) = tr(A²) (I − P is a projector).
  const Q = planeBasis(B);
  const QtR = new Float64Array(3 * N);
  for (let i = 0; i < N; i++)
    for (let k = 0; k < 3; k++) {
      const q = Q[i * 3 + k];
      if (q === 0) continue;
      for (let j = 0; j < N; j++) QtR[k * N + j] += q * R[i * N + j];
    }
  for (let i = 0; i < N; i++)
    for (let j = 0; j < N; j++)
      R[i * N + j] -= Q[i * 3] * QtR[j] + Q[i * 3 + 1] * QtR[N + j] + Q[i * 3 + 2] * QtR[2 * N + j];
  let tr = 0;
  let tr2 = 0;
  for (let i = 0; i < N; i++) {
    tr += R[i * N + i];
    for (let j = 0; j < N; j++) tr2 += R[i * N + j] * R[j * N + i];
  }
  return tr2 > 0 ? (tr * tr) / tr2 : N;
}

/** χ²ₖ quantile over k at the standard normal quantile z (Wilson–Hilferty; header). */
function chiSquareShare(k: number, z: number): number {
  const c = 2 / (9 * k);
  return Math.max(0, 1 - c + z * Math.sqrt(c)) ** 3;
}

/** P(X ≥ m) for X ~ Binomial(n, p), summed in log space. */
function binomialTail(n: number, p: number, m: number): number {
  if (m <= 0) return 1;
  let logPmf = n * Math.log1p(-p); // log P(X = 0)
  let sum = 0;
  for (let x = 0; x < n; x++) {
    if (x >= m) sum += Math.exp(logPmf);
    logPmf += Math.log((n - x) / (x + 1)) + Math.log(p / (1 - p));
  }
  if (n >= m) sum += Math.exp(logPmf);
  return Math.min(1, sum);
}

/**
 * The floor test (header) for the flat blocks' plane-fit residual variances `variances` under noise of
 * autocovariance `autocov` (lags up to `lag`).
 */
export function floorTest(variances: ArrayLike<number>, autocov: Float64Array, lag = PSD_LAG): FloorTest {
  const n = variances.length;
  const sorted = Float64Array.from(variances).sort();
  const quartile = sorted[Math.floor(QUARTILE * (n - 1))] ?? 0;
  const dof = blockDegrees(autocov, lag);
  const floor = chiSquareShare(dof, FLOOR_Z) / chiSquareShare(dof, QUARTILE_Z);
  let below = 0;
  while (below < n && sorted[below] < floor * quartile) below++;
  const p = binomialTail(n, FLOOR_SHARE, below);
  return { blocks: n, below, floor, dof, p, content: p < FLOOR_ALPHA };
}

/** A colour channel of the scan (on the guide's scale) with the levels at which its samples clip. */
export interface ClipChannel {
  plane: ArrayLike<number>;
  low: number;
  high: number;
}

/**
 * The floor test on the flat blocks of `psd` that keep CLIP_MARGIN noise standard deviations `channelSigma`
 * from the clip levels in every channel (the noise of a block near black or white is partly clipped away, so
 * it is quieter than the spectrum says without being content). Null when the psd carries no blocks.
 */
export function unclippedFloorTest(
  psd: NoisePsd,
  width: number,
  channels: ClipChannel[],
  channelSigma: number,
): FloorTest | null {
  const { blockVariances: vars, blockOrigins: origins } = psd;
  if (!vars || !origins) return null;
  const margin = CLIP_MARGIN * channelSigma;
  const kept: number[] = [];
  for (let b = 0; b < vars.length; b++) {
    let safe = true;
    for (const { plane, low, high } of channels)
      for (let y = 0; y < BLOCK && safe; y++)
        for (let x = 0, i = origins[b] + y * width; x < BLOCK; x++, i++)
          if (plane[i] - low < margin || high - plane[i] < margin) {
            safe = false;
            break;
          }
    if (safe) kept.push(vars[b]);
  }
  return floorTest(kept, psd.autocov, psd.lag);
}
