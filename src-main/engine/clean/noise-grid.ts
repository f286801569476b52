/**
 * A test for the 8×8 block grid that JPEG coding leaves in a scan, so that the noise estimate can leave out
 * the Haar blocks that straddle its boundaries.
 *
 * Reference
 * - ITU-T T.81 | ISO/IEC 10918-1 (1992), "Digital compression and coding of continuous-tone still images",
 *   A.2 and A.3.3: the image is coded in 8×8 blocks by a DCT whose quantisation error is independent from
 *   block to block, so the decoded image can step at the block boundaries, every 8 pixels on both axes.
 *
 * Why it matters. The noise estimate (noise-estimate.ts) reads the diagonal detail HH of the aligned 2×2
 * Haar blocks. Where a scan went through JPEG and was then cropped by an odd number of pixels (or the grid
 * sits at an odd offset for another reason), one column and one row of blocks in every four straddle a grid
 * boundary, and there HH holds the blocking as well as the noise. Measured on scikit-image's ihc.png (a
 * JPEG-born source): the mean HH² of the straddling blocks is 1.5–2 times that of the others, and σ̂ of
 * added noise σ 5 read 5.82.
 *
 * The test. HH is taken at every pixel offset (d = a − b − c + d of the 2×2 window whose top left is (x, y)),
 * and d² is summed per window phase x mod 8 (and y mod 8) over tiles of TILE×TILE windows. On the boundary
 * phase of a JPEG grid the sum is larger than on the other seven phases in most tiles; on content that is not
 * aligned to an 8-pixel grid each phase is as likely as another to hold the larger sum. So per axis: the
 * candidate is the phase with the largest sum of per-tile shares, and it must beat each of the seven others
 * in at least k of the T tiles, k the critical value of a one-sided sign test (Bin(T, ½)) at level ALPHA
 * divided by the eight phases the candidate was chosen from (Bonferroni). Beating phase + 4 rules out a
 * period of 4 (and 2, 1: pixel replication puts every odd phase up, moon.png); beating the others rules
 * out any other period that is not a divisor of 8. Both axes must pass: a JPEG grid is a grid, not a set of
 * stripes. Tiles whose windows are all 0 (a flat background) tell nothing and are not counted.
 *
 * Measured (sign test at ALPHA, tiles of 32): it fires on no PNG-born image of scikit-image 0.19.3's data
 * (camera, astronaut, coffee, chelsea, coins, cell, moon, text, page, brick, grass, gravel, horse,
 * motorcycle_left, phantom; at offsets 0 and 1, with σ 0, 3, 5 and 10 added), and on ihc.png, rocket.jpg,
 * retina.jpg, hubble_deep_field.jpg and most sharp-encoded JPEGs of those images at quality 50 and 75 with
 * σ ≤ 3 added (fewer at quality 90–95, where the blocking is weak and changes σ̂ little).
 */

/** Tile side in windows (chosen here: four grid periods, so each tile sees every phase 4·TILE times). */
const TILE = 32;
/** Grid period of JPEG (ITU-T T.81 A.2: 8×8 blocks). */
const PERIOD = 8;
/**
 * Level of the sign test on each axis, before the division by the PERIOD phases (chosen here: a JPEG grid
 * at quality 50–75 clears it by far on images of 512², and a false alarm costs a quarter of the blocks).
 */
const ALPHA = 1e-6;

/** The window phases (0…7) of a detected grid: windows at x ≡ `x` (mod 8) straddle a vertical boundary. */
export interface CodingGrid {
  x: number;
  y: number;
}

/**
 * The 8×8 coding grid of `plane` (width×height, row-major), or null when the test of the header does not find
 * one on both axes.
 */
export function codingGrid(plane: ArrayLike<number>, width: number, height: number): CodingGrid | null {
  const tw = Math.floor((width - 1) / TILE);
  const th = Math.floor((height - 1) / TILE);
  if (tw < 1 || th < 1) return null;
  const cols = new Float64Array(tw * th * PERIOD);
  const rows = new Float64Array(tw * th * PERIOD);
  for (let y = 0; y < th * TILE; y++) {
    const r0 = y * width;
    const r1 = r0 + width;
    const py = y % PERIOD;
    for (let tx = 0, t = Math.floor(y / TILE) * tw * PERIOD; tx < tw; tx++, t += PERIOD)
      for (let x = tx * TILE; x < (tx + 1) * TILE; x++) {
        const d = plane[r0 + x] - plane[r0 + x + 1] - plane[r1 + x] + plane[r1 + x + 1];
        // TILE is a multiple of PERIOD, so the phase of x in its tile is that of x in the image.
        cols[t + (x & (PERIOD - 1))] += d * d;
        rows[t + py] += d * d;
      }
  }
  const x = boundaryPhase(cols, tw * th);
  if (x < 0) return null;
  const y = boundaryPhase(rows, tw * th);
  return y < 0 ? null : { x, y };
}

/**
 * The phase that beats every other phase in enough tiles (header), or −1. `sums` holds PERIOD sums per tile.
 */
function boundaryPhase(sums: Float64Array, tiles: number): number {
  const share = new Float64Array(PERIOD);
  let informative = 0;
  for (let t = 0; t < tiles; t++) {
    let total = 0;
    for (let p = 0; p < PERIOD; p++) total += sums[t * PERIOD + p];
    if (!(total > 0)) continue;
    informative++;
    for (let p = 0; p < PERIOD; p++) share[p] += sums[t * PERIOD + p] / total;
  }
  let best = 0;
  for (let p = 1; p < PERIOD; p++) if (share[p] > share[best]) best = p;
  const need = signTestCritical(informative, ALPHA / PERIOD);
  if (need > informative) return -1;
  for (let p = 0; p < PERIOD; p++) {
    if (p === best) continue;
    let wins = 0;
    for (let t = 0; t < tiles; t++) if (sums[t * PERIOD + best] > sums[t * PERIOD + p]) wins++;
    if (wins < need) return -1;
  }
  return best;
}

/**
 * The smallest k with P(X ≥ k) ≤ `alpha` for X ~ Bin(n, ½) (the one-sided sign test's critical value; common
 * practice), n + 1 when even P(X = n) = 2⁻ⁿ exceeds alpha. Summed from the top in logarithms, so that large
 * n (2⁻ⁿ below the smallest double) stays exact to rounding.
 */
export function signTestCritical(n: number, alpha: number): number {
  const limit = Math.log(alpha);
  let logP = -n * Math.LN2;
  let logTail = logP;
  if (logTail > limit) return n + 1;
  for (let k = n - 1; k >= 0; k--) {
    // P(X = k) = P(X = k + 1)·(k + 1)/(n − k).
    logP += Math.log((k + 1) / (n - k));
    const hi = Math.max(logTail, logP);
    logTail = hi + Math.log(Math.exp(logTail - hi) + Math.exp(logP - hi));
    if (logTail > limit) return k + 1;
  }
  return 0;
}
