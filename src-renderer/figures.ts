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
  psnrOptimal(k: number): number;
  spectralBound(k: number): number;
  frobeniusOptimal(k: number): number;
}

/** Bytes per rank measured by the last real encode at `rank`. */
export interface Calibration {
  rank: number;
  bytes: number;
}

/** Container overhead added to the size estimate (a first guess, replaced by the encoder's figure). */
const ESTIMATE_OVERHEAD_BYTES = 128;

/**
 * Instant figures for rank k: errors from the spectrum (Eckart–Young–Mirsky), the size from the last real
 * encode's bytes per rank, or before any encode from k·planes·(width + height + 1) one-byte samples.
 */
export function estimateFigures(
  m: Spectrum,
  scan: Pick<ScanSummary, 'rawBytes' | 'width' | 'height'>,
  calib: Calibration | undefined,
  k: number,
): Figures {
  const perRank = calib ? calib.bytes / calib.rank : m.planes.length * (m.width + m.height + 1);
  const bytes = perRank * k + ESTIMATE_OVERHEAD_BYTES;
  const fo = m.frobeniusOptimal(k);
  return {
    psnr: m.psnrOptimal(k),
    bytes,
    ratio: scan.rawBytes / bytes,
    bpp: (8 * bytes) / (scan.width * scan.height),
    'spectral-bound': m.spectralBound(k),
    'frobenius-optimal': fo,
    frobenius: fo,
  };
}

/** The encoder's own figures. */
export function reportFigures(r: CompressReport): Figures {
  return {
    psnr: r.psnr,
    ssim: r.ssim,
    ratio: r.ratio,
    bytes: r.outputBytes,
    bpp: r.bpp,
    'spectral-bound': r.errors.spectralBound,
    'frobenius-optimal': r.errors.frobeniusOptimal,
    frobenius: r.errors.frobenius,
  };
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
