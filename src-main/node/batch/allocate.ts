/**
 * Share a byte total among files, each described by its rate–quality curve (rate-curve.ts).
 *
 * - `floor` ("equal quality", the default): the highest PSNR F that every file reaches within the total.
 *   Each file's bytes for F, bytesFor(F), is non-decreasing in F, so F is found by bisection; files that
 *   exceed F even at their smallest size stay there (a blank leaf), files that cannot reach F get their
 *   largest planned size.
 * - `mean`: the largest sum of PSNR. With a Lagrange multiplier λ each file takes the size maximising
 *   PSNR(r) − λ·r, which makes the slopes dPSNR/dr equal across the files not at an end of their range
 *   (Shoham & Gersho, "Efficient bit allocation for an arbitrary set of quantizers", IEEE Trans. ASSP 36(9),
 *   1988, §II); λ is found by bisection. On a piece PSNR = a + b·ln r the stationary point is r = b/λ.
 *
 * Both honour a per-file lower bound (`--min-psnr` raises it to bytesFor(DB)) and never plan more than the
 * total. Pure arithmetic, tested against closed forms in test/batch/allocate.test.ts.
 */
import type { RateCurve } from './rate-curve';

export type Favour = 'floor' | 'mean';

export interface Allocation {
  /** Planned bytes per file, in the order of the curves given (whole bytes, floor). */
  bytes: number[];
  /** Predicted PSNR per file at its planned bytes. */
  psnr: number[];
  /** The common floor (objective `floor`), or the lowest predicted PSNR (objective `mean`). */
  floor: number;
}

const ITERATIONS = 100;

/** The smallest total the curves allow, with the optional floor every file must reach. */
export function minimumTotal(curves: readonly RateCurve[], minPsnr?: number): number {
  return curves.reduce((s, c) => s + lowest(c, minPsnr), 0);
}

function lowest(c: RateCurve, minPsnr?: number): number {
  return Math.ceil(minPsnr === undefined ? c.lo : c.bytesFor(minPsnr));
}

/**
 * Allocate `total` bytes. Returns undefined when even the smallest sizes do not fit (see {@link minimumTotal}).
 */
export function allocate(
  curves: readonly RateCurve[],
  total: number,
  favour: Favour = 'floor',
  minPsnr?: number,
): Allocation | undefined {
  if (minimumTotal(curves, minPsnr) > total) return undefined;
  if (!curves.length) return { bytes: [], psnr: [], floor: Number.NaN };
  const bytes = favour === 'floor' ? byFloor(curves, total) : byMeanSlopes(curves, total, minPsnr);
  const psnr = bytes.map((b, i) => curves[i].psnrAt(b));
  const floor = favour === 'floor' ? floorOf(curves, bytes) : Math.min(...psnr);
  return { bytes, psnr, floor };
}

/** The common floor the sizes give: the lowest PSNR among files not held at their smallest size. */
function floorOf(curves: readonly RateCurve[], bytes: number[]): number {
  let f = Number.POSITIVE_INFINITY;
  bytes.forEach((b, i) => {
    f = Math.min(f, curves[i].psnrAt(b));
  });
  return f;
}

const sizesAt = (curves: readonly RateCurve[], db: number) =>
  curves.map((c) => Math.max(Math.ceil(c.lo), Math.ceil(c.bytesFor(db))));
const sum = (xs: number[]) => xs.reduce((s, x) => s + x, 0);

function byFloor(curves: readonly RateCurve[], total: number): number[] {
  let lo = Math.min(...curves.map((c) => c.psnrAt(c.lo)));
  let hi = Math.max(...curves.map((c) => c.psnrAt(c.hi)));
  if (sum(sizesAt(curves, hi)) <= total) return sizesAt(curves, hi);
  for (let i = 0; i < ITERATIONS && hi - lo > 1e-9; i++) {
    const mid = (lo + hi) / 2;
    if (sum(sizesAt(curves, mid)) <= total) lo = mid;
    else hi = mid;
  }
  return sizesAt(curves, lo);
}

/** The size in [from, c.hi] maximising PSNR(r) − λ·r: a piece's stationary point b/λ, or an end. */
function bestFor(c: RateCurve, lambda: number, from: number): number {
  const candidates = [from, c.hi];
  for (const s of c.segments) {
    candidates.push(s.from, s.to);
    if (s.b > 0) candidates.push(Math.min(s.to, Math.max(s.from, s.b / lambda)));
  }
  let best = from;
  let bestValue = Number.NEGATIVE_INFINITY;
  for (const r0 of candidates) {
    const r = Math.min(c.hi, Math.max(from, r0));
    const v = c.psnrAt(r) - lambda * r;
    if (v > bestValue + 1e-12 || (Math.abs(v - bestValue) <= 1e-12 && r < best)) {
      bestValue = v;
      best = r;
    }
  }
  return best;
}

function byMeanSlopes(curves: readonly RateCurve[], total: number, minPsnr?: number): number[] {
  const from = curves.map((c) => lowest(c, minPsnr));
  const sizes = (lambda: number) => curves.map((c, i) => Math.floor(bestFor(c, lambda, from[i])));
  // λ in log space: a steep λ gives every file its smallest size, a tiny one its largest.
  let lo = Math.log(1e-15);
  let hi = Math.log(1e6);
  if (sum(sizes(Math.exp(lo))) <= total) return sizes(Math.exp(lo));
  for (let i = 0; i < ITERATIONS; i++) {
    const mid = (lo + hi) / 2;
    if (sum(sizes(Math.exp(mid))) <= total) hi = mid;
    else lo = mid;
  }
  return sizes(Math.exp(hi)).map((b, i) => Math.max(b, from[i]));
}
