/**
 * Across a stretch the wide-band pass could not read as a band edge (banding-wide.ts: a significant step
 * that failed its checks, usually content such as a gel lane, a coat or a column of text), the band
 * profile's chain of steps is bridged by the value most lines agree on, or cut when they split.
 *
 * Per line, the window step across the stretch is (band step) + (content step on that line). Lines the
 * content does not cross agree on the band step alone, within the noise of a window step; lines it crosses
 * scatter. So the densest value of the per-line steps (the midpoint region of the shortest interval that
 * holds the most lines, a "shorth"-type mode) is the band step. When a second, separate group of lines
 * agrees on zero (the content is uniform and spans many lines, so both "band edge" and "no band edge"
 * have support), the two cannot be told apart and the chain is cut there.
 *
 * Between cuts, chainProfile makes the profile zero-mean on its own.
 *
 * References
 * - D. F. Andrews, P. J. Bickel, F. R. Hampel, P. J. Huber, W. H. Rogers, J. W. Tukey, "Robust Estimates
 *   of Location: Survey and Advances", Princeton University Press 1972: the shorth (mean of the shortest
 *   half of the sample); here the shortest interval of a fixed length, i.e. the densest window (from memory).
 */

/** Half-width of the window that counts agreeing lines, in standard deviations of a window step (chosen here). */
const AGREE_SD = 2;
/**
 * A densest value away from zero is doubted when at least this share of the lines lies within AGREE_SD
 * standard deviations of zero (chosen here: the lanes of samples/gel-scan.tif stop at the wells, leaving
 * ~11 % of the rows without their edge; a band edge of 4 standard deviations leaves ~2 % there by noise).
 */
const MIN_ZERO_SHARE = 0.08;
/** The densest value is zero when within this many of its standard errors of it (chosen here). */
const ZERO_SE = 3;
/** The densest window must hold a majority of the finite lines to be trusted (chosen here)… */
const MIN_MODE_SHARE = 0.5;
/**
 * …except for a densest value at zero, which bridges (no band edge) when it holds this share (chosen here:
 * the edge of the coat in camera.png scatters about half the rows far beyond the band steps; cutting there
 * left 58–59 % of two benchmark cases removed, bridging 95–99 %, none made worse on seeds 1–8).
 */
const MIN_ZERO_MODE_SHARE = 0.25;

/**
 * The band step across a stretch from its per-line window steps `d` (NaN where a line gave none), with
 * `sd` the standard deviation of a window step on content-free lines: 0 when most lines (or, where content
 * scatters the rest, MIN_ZERO_MODE_SHARE of them) agree on no step (within ZERO_SE standard errors, or
 * `zeroFloor`), the agreed step when no group of lines sits at zero;
 * null (cut the chain) when the lines split between a step and zero, agree on nothing, or agree on more
 * than `maxStep`.
 */
export function bridgeStep(d: Float64Array, sd: number, maxStep: number, zeroFloor: number): number | null {
  const v = Float64Array.from(d.filter(Number.isFinite)).sort();
  const n = v.length;
  if (n === 0 || !(sd > 0)) return null;
  const half = AGREE_SD * sd;
  // Densest window of width 2·half: two pointers over the sorted values.
  let best = 0;
  let bestLo = 0;
  let bestHi = 0;
  for (let lo = 0, hi = 0; lo < n; lo++) {
    while (hi < n && v[hi] - v[lo] <= 2 * half) hi++;
    if (hi - lo > best) {
      best = hi - lo;
      bestLo = lo;
      bestHi = hi;
    }
  }
  let sum = 0;
  for (let i = bestLo; i < bestHi; i++) sum += v[i];
  const mode = sum / best;
  const nearZero = Math.abs(mode) <= Math.max(ZERO_SE * (sd / Math.sqrt(best)), zeroFloor);
  // Content that scatters most lines (a coat's or a lane's edge) may still leave the densest value at zero:
  // no band edge there either, when enough lines hold it; otherwise nothing is agreed on and the chain is cut.
  if (best < MIN_MODE_SHARE * n) return nearZero && best >= MIN_ZERO_MODE_SHARE * n ? 0 : null;
  if (Math.abs(mode) > maxStep) return null;
  // Lines that agree on (nearly) no step: no band edge here, the chain goes on unchanged.
  if (nearZero) return 0;
  let zero = 0;
  for (let i = 0; i < n; i++) if (Math.abs(v[i]) <= half) zero++;
  return zero >= MIN_ZERO_SHARE * n ? null : mode;
}

/**
 * The running sum of the links' steps (each adds its step to every position after `at`), made zero-mean
 * separately between cuts (a cut at c separates c from c + 1): the stretches on either side of a cut are
 * linked by no trusted step, so each keeps its own band shape and its offset against the others is left in
 * place. With correct steps inside a stretch, its error is only its true mean offset, never more than the
 * bands themselves.
 */
export function chainProfile(
  lineLen: number,
  links: ReadonlyArray<{ at: number; step: number }>,
  cuts: number[],
): Float64Array {
  const profile = new Float64Array(lineLen);
  for (const e of links) for (let x = e.at + 1; x < lineLen; x++) profile[x] += e.step;
  let from = 0;
  for (const to of [...[...new Set(cuts)].sort((p, q) => p - q).map((c) => c + 1), lineLen]) {
    if (to <= from) continue;
    let mean = 0;
    for (let x = from; x < to; x++) mean += profile[x];
    mean /= to - from;
    for (let x = from; x < to; x++) profile[x] -= mean;
    from = to;
  }
  return profile;
}
