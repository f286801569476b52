/**
 * One file's rate–quality curve, as the survey measured it: PSNR (dB, on the file's own sample scale) against
 * bytes on disk. Between measured points PSNR is linear in ln(bytes), the usual high-rate shape of a transform
 * coder (D ∝ 2^(−2R): Gersho & Gray, "Vector Quantization and Signal Compression", 1992, §10.6, gives
 * PSNR rising 6.02 dB per extra bit per sample); beyond them the end segment's slope continues up to
 * {@link MAX_SPAN} times the measured range, and no further: the allocator never plans outside it.
 *
 * Pure arithmetic: the survey (survey.ts) measures the points, the allocator (allocate.ts) reads curves.
 */

/** One measured point: a whole file of `bytes` bytes reaches `psnr` dB. */
export interface RatePoint {
  bytes: number;
  psnr: number;
}

/** PSNR cap: a blank or exact file reports +∞; the curve holds it at this. */
const PSNR_CAP = 99;

/** How far above the highest measured point a plan may reach (a factor on bytes). */
const MAX_SPAN = 4;

/** Slope (dB per e-fold of bytes) when only one point could be measured: 3 dB per doubling (from memory). */
const DEFAULT_SLOPE = 3 / Math.LN2;

/** A monotone curve over [lo, hi] bytes. */
export interface RateCurve {
  /** Smallest and largest file the allocator may plan. */
  lo: number;
  hi: number;
  /** Predicted PSNR of a file of `bytes` bytes (clamped to [lo, hi]). Non-decreasing. */
  psnrAt(bytes: number): number;
  /** Smallest bytes in [lo, hi] whose predicted PSNR is at least `db`; `hi` when even that falls short. */
  bytesFor(db: number): number;
  /** The pieces on which PSNR = a + b·ln(bytes), in order (for the equal-slope allocation). */
  segments: { from: number; to: number; a: number; b: number }[];
}

/**
 * Build a curve from measured points: sorted by bytes, PSNR made non-decreasing (a later point never predicts
 * less than an earlier one: pool-adjacent-violators in its simplest form, the running maximum), capped.
 * @throws RangeError when no point has positive bytes.
 */
export function rateCurve(points: readonly RatePoint[]): RateCurve {
  const pts = points
    .filter((p) => p.bytes > 0 && !Number.isNaN(p.psnr))
    .map((p) => ({ x: Math.log(p.bytes), y: Math.min(PSNR_CAP, p.psnr) }))
    .sort((p, q) => p.x - q.x);
  if (!pts.length) throw new RangeError('a rate curve needs at least one point with bytes > 0');
  for (let i = 1; i < pts.length; i++) pts[i].y = Math.max(pts[i].y, pts[i - 1].y);
  const xs = pts.map((p) => p.x);
  const lastX = xs[xs.length - 1];
  const hiX = lastX + Math.log(MAX_SPAN);
  const segments: RateCurve['segments'] = [];
  for (let i = 1; i < pts.length; i++) {
    const dx = pts[i].x - pts[i - 1].x;
    if (dx <= 0) continue;
    const b = (pts[i].y - pts[i - 1].y) / dx;
    segments.push({ from: pts[i - 1].x, to: pts[i].x, a: pts[i].y - b * pts[i].x, b });
  }
  const last = pts[pts.length - 1];
  const endSlope = segments.length ? segments[segments.length - 1].b : DEFAULT_SLOPE;
  // Above the last point: its slope, until the cap.
  const capX = endSlope > 0 ? last.x + (PSNR_CAP - last.y) / endSlope : hiX;
  const top = Math.min(hiX, capX);
  if (top > lastX) segments.push({ from: lastX, to: top, a: last.y - endSlope * last.x, b: endSlope });
  if (!segments.length) segments.push({ from: lastX, to: lastX, a: last.y, b: 0 });
  const lo = Math.exp(xs[0]);
  const hi = Math.exp(Math.max(lastX, top));
  const at = (x: number): number => {
    for (const s of segments) if (x <= s.to) return Math.min(PSNR_CAP, s.a + s.b * Math.max(x, s.from));
    const s = segments[segments.length - 1];
    return Math.min(PSNR_CAP, s.a + s.b * s.to);
  };
  const psnrAt = (bytes: number) => at(Math.log(Math.min(hi, Math.max(lo, bytes))));
  const bytesFor = (db: number): number => {
    if (psnrAt(lo) >= db) return lo;
    for (const s of segments) {
      const yTo = s.a + s.b * s.to;
      if (yTo >= db && s.b > 0) return Math.min(hi, Math.exp((db - s.a) / s.b));
    }
    return hi;
  };
  return {
    lo,
    hi,
    psnrAt,
    bytesFor,
    segments: segments.map((s) => ({ from: Math.exp(s.from), to: Math.exp(s.to), a: s.a, b: s.b })),
  };
}
