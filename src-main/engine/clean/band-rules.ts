/**
 * Ruled lines or sensor defects: which spikes of a banding profile that cross every line are printed
 * lines (content, kept by banding.ts clipSpikes) rather than hot or dead columns and rows (removed).
 *
 * Both cross the whole of a crop, so the share of lines that carry them cannot tell them apart. What does
 * is how the offset depends on what lies under it. A sensor defect adds a fixed offset (v = u + d) or
 * scales the signal (v = g·u): fitted against the level of the line around it, its offset is constant or
 * shrinks towards black (0). A printed line lays its ink over the paper, v = u − α·(u − ink): its offset
 * shrinks to nothing where the paper under it is as dark as its own ink, and where ink or another rule
 * lies over it, and it changes sign beyond. So along the spike's position, the offsets of the lines
 * (their running-median residuals) are fitted as a straight line of the lines' own level (the running
 * median, band-profile.ts): where that line crosses zero well inside the range of sample values (its
 * value at black, or at white for a light line on a dark ground, has the opposite sign to the spike,
 * beyond what banding and the fit's own error can make), the spike is a rule.
 *
 * On flat paper the level hardly varies and the fit cannot tell; rules come in families, so such a spike
 * is taken for a rule when another full-span spike of the same sign on the axis is one by its fit. A lone
 * rule on paper of one level, no other rule of its sign beside it, stays indistinguishable from a defect
 * and is removed as before.
 *
 * References
 * - Least squares line with the standard error of its prediction, s·√(1/n + (x₀ − x̄)²/Sxx) (common
 *   statistical fact, from memory); one pass of trimming at 3 robust standard deviations (1.4826·MAD) of
 *   the residuals first, so ink written over a rule does not pull the fit (common practice).
 */
import type { LineResiduals } from './band-gather';
import { medianInPlace } from './medians';
import { MAD_TO_SIGMA } from './noise-estimate';

/** The fit's value at the far end must exceed banding's reach by this many of its standard errors (chosen here). */
const FIT_SIGNIFICANCE = 3;
/** Residuals beyond this many robust standard deviations of the first fit are left out of the second (common practice). */
const TRIM = 3;

/** Least-squares line o = a + β·(m − m̄) over the lines kept, with the residuals' standard deviation. */
interface LevelFit {
  at: (level: number) => { value: number; se: number };
}

/**
 * Whether the offset `peak` at position x (the peak of a run of full-span spikes) is a rule's (1), a
 * defect's (0), or the fit cannot tell (2). `limit` is the spike limit of banding.ts, `maxValue` the
 * largest sample value.
 */
function classify(
  lr: LineResiduals,
  lineLen: number,
  x: number,
  peak: number,
  reach: number,
  maxValue: number,
): 0 | 1 | 2 {
  const fit = levelFit(lr, lineLen, x);
  if (!fit) return 2;
  // A dark spike is a rule when its offset changes sign between the lines' level and black; a light one
  // (light lines on a dark ground) between their level and white.
  const { value, se } = fit.at(peak < 0 ? 0 : maxValue);
  if (Math.sign(value) === -Math.sign(peak) && Math.abs(value) > reach + FIT_SIGNIFICANCE * se) return 1;
  // The fit could not have shown a crossing of the spike's own size there.
  return FIT_SIGNIFICANCE * se > Math.abs(peak) ? 2 : 0;
}

/** The trimmed least-squares fit of the lines' residuals at x against their running-median level. */
function levelFit(lr: LineResiduals, lineLen: number, x: number): LevelFit | null {
  const N = lr.lines.length / lineLen;
  const o = new Float64Array(N);
  const m = new Float64Array(N);
  for (let k = 0; k < N; k++) {
    o[k] = lr.resid[x * N + k];
    m[k] = lr.lines[k * lineLen + x] - o[k];
  }
  const keep = new Uint8Array(N).fill(1);
  let fit = solve(o, m, keep);
  if (!fit) return null;
  const r = new Float64Array(N);
  for (let k = 0; k < N; k++) r[k] = Math.abs(o[k] - fit.predict(m[k]));
  const cut = (TRIM * medianInPlace(Float64Array.from(r), N)) / MAD_TO_SIGMA;
  for (let k = 0; k < N; k++) keep[k] = r[k] <= cut ? 1 : 0;
  fit = solve(o, m, keep) ?? fit;
  return { at: fit.at };
}

function solve(o: Float64Array, m: Float64Array, keep: Uint8Array) {
  let n = 0;
  let mm = 0;
  let om = 0;
  for (let k = 0; k < o.length; k++)
    if (keep[k]) {
      n++;
      mm += m[k];
      om += o[k];
    }
  if (n < 3) return null;
  mm /= n;
  om /= n;
  let sxx = 0;
  let sxy = 0;
  for (let k = 0; k < o.length; k++)
    if (keep[k]) {
      sxx += (m[k] - mm) ** 2;
      sxy += (m[k] - mm) * (o[k] - om);
    }
  if (!(sxx > 0)) return null;
  const beta = sxy / sxx;
  const predict = (level: number) => om + beta * (level - mm);
  let ss = 0;
  for (let k = 0; k < o.length; k++) if (keep[k]) ss += (o[k] - predict(m[k])) ** 2;
  const s2 = ss / Math.max(1, n - 2);
  return {
    predict,
    at: (level: number) => ({
      value: predict(level),
      se: Math.sqrt(s2 * (1 / n + (level - mm) ** 2 / sxx)),
    }),
  };
}

/**
 * Of the runs of `candidates` (positions of the tested profile `t` beyond the shoulder level of banding.ts,
 * 1), mark in the result those that are printed lines: by their own fit, or, for a spike (beyond `limit`
 * from `centre`, the median of t) whose fit cannot tell, because another spike of the same sign is one by its
 * fit. `reach` is the largest offset banding gives one position (banding.ts).
 */
export function ruledSpikes(
  t: Float64Array,
  centre: number,
  candidates: Uint8Array,
  lr: LineResiduals,
  limits: { reach: number; limit: number },
  maxValue: number,
): Uint8Array {
  const L = t.length;
  const rule = new Uint8Array(L);
  const runs: Array<{ from: number; to: number; sign: number; spike: boolean; kind: 0 | 1 | 2 }> = [];
  for (let i = 0; i < L; ) {
    if (!candidates[i]) {
      i++;
      continue;
    }
    let j = i;
    let peak = i;
    while (j < L && candidates[j] && Math.sign(t[j] - centre) === Math.sign(t[i] - centre)) {
      if (Math.abs(t[j] - centre) > Math.abs(t[peak] - centre)) peak = j;
      j++;
    }
    const d = t[peak] - centre;
    runs.push({
      from: i,
      to: j,
      sign: Math.sign(d),
      spike: Math.abs(d) > limits.limit,
      kind: classify(lr, L, peak, d, limits.reach, maxValue),
    });
    i = j;
  }
  for (const r of runs) {
    const family = r.spike && runs.some((q) => q.spike && q.kind === 1 && q.sign === r.sign);
    if (r.kind === 1 || (r.kind === 2 && family)) rule.fill(1, r.from, r.to);
  }
  return rule;
}
