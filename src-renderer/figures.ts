/**
 * The numbers the page works out itself, with no DOM: instant readouts from the spectrum, the readouts of
 * an encoder report or a stack frame, the removed part as shown, and the ranks of the two factorisations
 * that follow opening a scan.
 */
import type { CompressReport, ScanSummary, StackFrameInfo } from '../src-main/contract';
import type { Figures } from './format';

/** Rank of the first factorisation: small enough to show within a second on a 12-megapixel scan. */
export const FIRST_PASS_RANK = 24;

/** Rank of the background factorisation that follows, by scan size (pixels → rank). */
export function secondPassRank(pixels: number): number {
  return pixels <= 1e6 ? 300 : pixels <= 4e6 ? 200 : pixels <= 16e6 ? 120 : 80;
}

/** What the instant figures need of the page's low-rank model (./model.ts). */
export interface Spectrum {
  readonly planes: readonly unknown[];
  readonly width: number;
  readonly height: number;
  /** Layers the page holds: the spectrum is known up to this rank. */
  readonly maxRank: number;
  psnrOptimal(k: number): number;
  spectralBound(k: number): number;
  frobeniusOptimal(k: number): number;
}

/** Bytes of a real encode of the open scan at a whole-plane rank. */
export interface Calibration {
  rank: number;
  bytes: number;
}

/** How far from a measured rank a size may be scaled in proportion and still be trusted within 10 %. */
const NEAR = 0.1;
/** The widest bracket (upper rank ÷ lower rank) the estimate interpolates across. */
const SPAN = 3;

/**
 * The file size at rank k from real rank-budget encodes of the same scan, or undefined when it cannot be
 * trusted within 10 %: bytes per rank interpolated linearly between the measured ranks around k (at most
 * 3× apart), or the bytes per rank of a measured rank within ±10 % of k. Bytes per rank grow with rank
 * (camera.png, whole plane: 325 B at rank 20, 459 at 60, 555 at 107, from `rankfold compress --json`), so
 * a plain linear size would overshoot between far-apart ranks (31 kB against 27.5 kB measured at 60).
 */
export function sizeEstimate(measured: readonly Calibration[], k: number): number | undefined {
  const exact = measured.find((c) => c.rank === k);
  if (exact) return exact.bytes;
  const below = maxBy(
    measured.filter((c) => c.rank < k),
    (c) => c.rank,
  );
  const above = maxBy(
    measured.filter((c) => c.rank > k),
    (c) => -c.rank,
  );
  const rate = (c: Calibration) => c.bytes / c.rank;
  if (below && above && above.rank <= SPAN * below.rank)
    return k * (rate(below) + ((rate(above) - rate(below)) * (k - below.rank)) / (above.rank - below.rank));
  const near = [below, above].find((c) => c && Math.abs(k - c.rank) <= NEAR * c.rank);
  return near ? k * rate(near) : undefined;
}

function maxBy<T>(xs: T[], key: (x: T) => number): T | undefined {
  let best: T | undefined;
  for (const x of xs) if (best === undefined || key(x) > key(best)) best = x;
  return best;
}

/** Remember a real encode's size (latest per rank, at most `keep` ranks, the most recent kept). */
export function addCalibration(measured: readonly Calibration[], c: Calibration, keep = 12): Calibration[] {
  return [...measured.filter((m) => m.rank !== c.rank), c].slice(-keep);
}

/**
 * Instant figures for rank k of a whole plane: errors from the spectrum (Eckart–Young–Mirsky) while k is
 * within the layers the page holds, the size (and so ratio and bits per pixel) only when real encodes
 * make it trustworthy within 10 % (see {@link sizeEstimate}). SSIM has no instant estimate.
 */
export function estimateFigures(
  m: Spectrum,
  scan: Pick<ScanSummary, 'rawBytes' | 'width' | 'height'>,
  measured: readonly Calibration[],
  k: number,
): Figures {
  const f: Figures = { rank: k };
  if (k <= m.maxRank) {
    const fo = m.frobeniusOptimal(k);
    f.psnr = m.psnrOptimal(k);
    f['spectral-bound'] = m.spectralBound(k);
    f['frobenius-optimal'] = fo;
    f.frobenius = fo;
  }
  const bytes = sizeEstimate(measured, k);
  if (bytes !== undefined) {
    f.bytes = bytes;
    f.ratio = scan.rawBytes / bytes;
    f.bpp = (8 * bytes) / (scan.width * scan.height);
  }
  return f;
}

/** The rank the encoder's figures are for: the base rank of a whole plane, the mean tile rank when tiled. */
export function reportRank(r: Pick<CompressReport, 'ranks'>): number | undefined {
  const first = r.ranks[0];
  if (!first) return undefined;
  if (first.rank !== undefined) return first.rank;
  const means = r.ranks.flatMap((c) => (c.tiles ? [c.tiles.mean] : []));
  if (means.length === 0) return undefined;
  const mean = means.reduce((a, b) => a + b, 0) / means.length;
  return Math.round(10 * mean) / 10;
}

/**
 * The encoder's own figures. `spectrum`: the page's whole-plane spectrum of the same grey scan, used for
 * the one figure the encoder leaves out: at rank 0 (residual layer only) it does not factor the plane, so
 * its σ₁ is NaN; the largest error of the empty base is then σ₁ itself, which the page's spectrum holds
 * (Eckart–Young–Mirsky: ‖A − A₀‖₂ = σ₁).
 */
export function reportFigures(
  r: CompressReport,
  spectrum?: Pick<Spectrum, 'planes' | 'spectralBound'>,
): Figures {
  const layered = (r.layers?.residualBytes ?? 0) > 0;
  return {
    rank: reportRank(r),
    psnr: r.psnr,
    ssim: r.ssim,
    ratio: r.ratio,
    bytes: r.outputBytes,
    bpp: r.bpp,
    'spectral-bound': spectralAtReport(r, spectrum),
    'frobenius-optimal': r.errors.frobeniusOptimal,
    // The report's errors are the base layer's; with a residual layer on top, Total error is the file's.
    frobenius: layered ? fileError(r) : r.errors.frobenius,
  };
}

/** The report's σₖ₊₁, or σ₁ from the page's spectrum for a grey rank-0 file (see {@link reportFigures}). */
function spectralAtReport(r: CompressReport, spectrum?: Pick<Spectrum, 'planes' | 'spectralBound'>): number {
  // NaN in the engine, null once it has crossed JSON: either way not a number.
  const s = r.errors.spectralBound;
  const greyRank0 = r.channels === 1 && r.ranks.length === 1 && r.ranks[0].rank === 0;
  return !Number.isFinite(s) && greyRank0 && spectrum?.planes.length === 1 ? spectrum.spectralBound(0) : s;
}

/**
 * The decoded file's total error ‖A − Â‖_F (grey levels) from its PSNR over the colour samples,
 * PSNR = 10·log10(N·peak² / SSE) (the definition of src-main/engine/metrics, N = samples of the colour planes).
 */
function fileError(r: Pick<CompressReport, 'width' | 'height' | 'channels' | 'bitDepth' | 'psnr'>): number {
  const n = r.width * r.height * (r.channels >= 3 ? 3 : 1);
  const peak = r.bitDepth === 16 ? 65535 : 255;
  return peak * Math.sqrt(n) * 10 ** (-r.psnr / 20);
}

/** A stack frame's figures: quality as recorded for the frame, sizes of the whole stack. */
export function stackFigures(info: StackFrameInfo, size: { width: number; height: number }): Figures {
  return {
    psnr: info.psnr,
    ssim: info.ssim,
    bytes: info.fileBytes,
    ratio: info.rawBytes / info.fileBytes,
    bpp: (8 * info.fileBytes) / (size.width * size.height * info.frameCount),
  };
}

/** The removed part as shown: offset to mid-grey (peak / 2) and amplified by `gain`. */
export function removedForDisplay(removed: Float32Array[], peak: number, gain: number): Float32Array[] {
  const mid = peak / 2;
  return removed.map((a) => {
    const out = new Float32Array(a.length);
    for (let i = 0; i < a.length; i++) out[i] = mid + gain * a[i];
    return out;
  });
}

/**
 * The PSNR a scan opens at. Common practice (from memory, no single standard): at about 35 dB and above,
 * an 8-bit scan's truncation errors are hard to see at 100 % on a screen, while 20–25 dB shows streaks.
 */
const OPENING_PSNR_DB = 35;

/** Why the scan opened at its rank: `reached` (the floor is met), `pending` (more layers are coming), `capped`. */
export interface OpeningChoice {
  rank: number;
  why: 'reached' | 'pending' | 'capped';
  floorDb: number;
}

/**
 * The opening rank: the smallest k whose rank-k truncation reaches `floorDb`, from the singular values alone.
 * By Eckart–Young–Mirsky (Eckart & Young, Psychometrika 1(3):211–218, 1936) the truncation's squared error
 * is the tail energy Σ_{i>k} σᵢ² = ‖A‖_F² − Σ_{i≤k} σᵢ², so MSE = tail / (m·n·planes) and PSNR follows
 * (`psnrOptimal`). `cap` is the deepest rank the page will hold for this scan; when the layers held so far
 * end before `cap` without reaching the floor the choice is `pending` (open at the deepest held, then move).
 */
export function openingRank(
  m: Pick<Spectrum, 'maxRank' | 'psnrOptimal'>,
  cap: number,
  floorDb = OPENING_PSNR_DB,
): OpeningChoice {
  const top = Math.max(1, Math.min(cap, m.maxRank));
  for (let k = 1; k <= top; k++) if (m.psnrOptimal(k) >= floorDb) return { rank: k, why: 'reached', floorDb };
  return { rank: top, why: m.maxRank < cap ? 'pending' : 'capped', floorDb };
}

/** The sentence under the Rank slider that says why the scan opened at its rank. */
export function openingText(c: OpeningChoice): string {
  const dB = `${c.floorDb} dB`;
  if (c.why === 'reached')
    return `Opened at rank ${c.rank}: the smallest rank whose approximation reaches ${dB} PSNR, worked out from the singular values (the saved file's rounding can take a little off).`;
  if (c.why === 'pending')
    return `Showing rank ${c.rank} while more layers load; the view will move to the smallest rank that reaches ${dB} PSNR.`;
  return `Opened at rank ${c.rank}, the deepest rank the page holds for a scan this size; ${dB} PSNR needs more (the scan is noisy or very detailed). Type a budget such as “${dB}” to let the encoder find it.`;
}
