/**
 * When the scan encoder (./encode) writes the lossless file (../codec/lossless-file) instead of a lossy one:
 *
 *  - `exact: 'always'` (the `--lossless` option): always, with no lossy search;
 *  - `exact: 'auto'` under a byte budget: when the lossless file fits the budget. A quick figure over a few
 *    rows first rejects scans far over the budget; then the exact coder run over sampled strips
 *    (../codec/lossless-image estimateExactTotal) estimates the size, and only an estimate within
 *    {@link ESTIMATE_MARGIN} of the budget pays for the real encode. A photograph costs one quick pass over
 *    8 rows, not a lossless encode;
 *  - `exact: 'auto'` under a PSNR or SSIM floor: when the lossless file is no larger than the lossy file that
 *    meets the floor (estimated first in the same way);
 *  - never for a rank budget, nor when `exact` is absent.
 */
import type { DecodedImage } from '../../contract';
import { estimateExactTotal, roughExactBytes } from '../codec/lossless-image';
import { decodeImageFile } from './decode-image';
import { budgetBytes, type EncodeOptions, type EncodeResult } from './encode-options';
import { exactImageFile } from './image-writer';
import { floatScan, type ScanImage } from './scan-image';

/**
 * An estimate up to this factor over the budget still pays for the real encode. The 64k-pixel estimate was
 * within −5 % / +14 % of the real plane size on the test images (phantom +9 %, moon −5 %, camera −0.6 %,
 * speed.png −1.6 %).
 */
const ESTIMATE_MARGIN = 1.2;
/** Pixels per plane the estimate codes (about 1 % of an 8-megapixel scan). */
const ESTIMATE_PIXELS = 1 << 16;
/**
 * Before that, rows of the quick figure (../codec/lossless-image roughExactBytes), and how far over the
 * budget it may be. Measured against the coder's real size: speed.png ×0.47, camera ×0.50, page ×0.50,
 * moon ×0.33, phantom ×1.23 (its few edges cost more than their magnitude bits); a scan whose figure is over
 * 3× the budget is far from fitting.
 */
const ROUGH_ROWS = 8;
const ROUGH_MARGIN = 3;

/**
 * Encode `img` as `opts.exact` asks: the lossless file where it is chosen (see the module comment), else
 * whatever `lossy` writes.
 */
export function chooseExact(
  img: ScanImage,
  opts: EncodeOptions,
  lossy: (img: ScanImage, opts: EncodeOptions) => EncodeResult,
): EncodeResult {
  const kind = opts.budget.kind;
  if (opts.exact === undefined || (opts.exact === 'auto' && kind === 'rank')) return lossy(img, opts);
  if (opts.exact === 'always') return exactResult(floatScan(img), opts);
  const budget = budgetBytes(opts.budget, img);
  if (budget !== undefined) return exactWithin(img, opts, budget) ?? lossy(img, opts);
  const floor = lossy(img, opts);
  return exactWithin(img, opts, floor.bytes.length) ?? floor;
}

/** The lossless result when its file is at most `bytes` long (estimated first), else undefined. */
function exactWithin(img: ScanImage, opts: EncodeOptions, bytes: number): EncodeResult | undefined {
  const now = opts.now ?? Date.now;
  const t0 = now();
  const nc = img.channels >= 3 ? 3 : 1;
  if (roughExactBytes(img.planes.slice(0, nc), img.width, img.height, ROUGH_ROWS) > ROUGH_MARGIN * bytes)
    return undefined;
  const float = floatScan(img);
  const source = float.planes.slice(0, nc);
  const estimate = estimateExactTotal(source, img.width, img.height, img.bitDepth, ESTIMATE_PIXELS);
  if (estimate > ESTIMATE_MARGIN * bytes) return undefined;
  const r = exactResult(float, opts, t0);
  return r.bytes.length <= bytes ? r : undefined;
}

/** Whether every channel of `a` equals that of `b`, sample for sample. */
function sameSamples(a: Float32Array[], b: Float32Array[]): boolean {
  if (a.length !== b.length) return false;
  for (let c = 0; c < a.length; c++) {
    const x = a[c];
    const y = b[c];
    if (x.length !== y.length) return false;
    for (let i = 0; i < x.length; i++) if (x[i] !== y[i]) return false;
  }
  return true;
}

/**
 * The lossless file and its figures, measured on the file as written (decoded again with the real reader).
 * @throws RangeError if the file does not decode to the source (a defect, never expected)
 */
function exactResult(img: DecodedImage, opts: EncodeOptions, t0?: number): EncodeResult {
  const now = opts.now ?? Date.now;
  const start = t0 ?? now();
  opts.onProgress?.('lossless', 0);
  const { file: bytes, planeBytes } = exactImageFile(img, opts);
  opts.checkCancelled?.();
  const decoded = decodeImageFile(bytes, img.file);
  if (!sameSamples(decoded.samples, img.planes))
    throw new RangeError(`${img.file}: the lossless file does not decode to the source samples`);
  opts.onProgress?.('done', 1);
  return {
    bytes,
    header: decoded.header,
    decoded,
    ranks: [],
    psnr: Number.POSITIVE_INFINITY,
    ssim: 1,
    errors: { frobenius: 0, frobeniusOptimal: 0, spectralBound: Number.NaN },
    factorMs: 0,
    encodeMs: now() - start,
    lossless: true,
    layers: {
      baseBytes: 0,
      residualBytes: 0,
      residualSteps: [],
      chosen: 'lossless',
      candidates: [],
      residualEncodes: 0,
      losslessBytes: planeBytes,
    },
  };
}
