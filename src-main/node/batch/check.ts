/**
 * `--expand-check`: decode the written .rkf again (through the codec's own reader, which validates every chunk CRC) and measure PSNR against
 * the original. The file passes when the sizes agree and the PSNR is within {@link CHECK_TOLERANCE_DB} of
 * the PSNR the compressor reported (our own PSNR code, independent of the encoder's), and the SSIM (the
 * engine's Wang et al. 2004 implementation, re-run on the re-decoded samples) within {@link CHECK_TOLERANCE_SSIM}.
 */
import type { CompressOptions, CompressReport } from '../../contract';
import { ssimPlanes } from '../../engine/metrics';
import { decodeImage } from '../image/decode';
import { loadReader } from './codec';
import type { ExpandCheck } from './job';

/**
 * Agreement required between the reported and the re-measured PSNR. Both are computed on the same decoded
 * samples, so they differ only by summation order in float64; 0.01 dB is far above that, and far below what a
 * real defect does (a wrong plane, tile or chunk moves PSNR by whole decibels).
 */
const CHECK_TOLERANCE_DB = 0.01;

/** SSIM agreement: the same samples and the same window (Wang et al. 2004), so only float rounding differs. */
const CHECK_TOLERANCE_SSIM = 1e-4;

/** PSNR over all planes (Gonzalez & Woods, Digital Image Processing, 10·log10(MAX²/MSE)). Infinity when equal. */
export function psnrOfPlanes(a: Float32Array[], b: Float32Array[], maxValue: number): number {
  let sse = 0;
  let n = 0;
  for (let c = 0; c < a.length; c++) {
    const x = a[c];
    const y = b[c];
    for (let i = 0; i < x.length; i++) {
      const d = x[i] - y[i];
      sse += d * d;
    }
    n += x.length;
  }
  if (sse === 0) return Number.POSITIVE_INFINITY;
  return 10 * Math.log10((maxValue * maxValue) / (sse / n));
}

export async function expandCheck(
  input: string,
  output: string,
  report: CompressReport,
  options: CompressOptions,
): Promise<ExpandCheck> {
  const readRkf = await loadReader();
  const [orig, { decoded }] = await Promise.all([
    decodeImage(input, { page: options.page, pixelLimit: options.pixelLimit }),
    readRkf(output, { pixelLimit: Number.MAX_SAFE_INTEGER }),
  ]);
  if (orig.width !== decoded.width || orig.height !== decoded.height || orig.channels !== decoded.channels)
    return {
      psnr: Number.NaN,
      ok: false,
      message: `decoded output is ${decoded.width}×${decoded.height}×${decoded.channels}, the source is ${orig.width}×${orig.height}×${orig.channels}`,
    };
  if (decoded.header.sourceSha256 !== orig.sourceSha256)
    return {
      psnr: Number.NaN,
      ok: false,
      message: 'the source SHA-256 recorded in the .rkf header does not match the input',
    };
  // Metrics cover the colour planes only: alpha is stored losslessly and reported apart (as the encoder does).
  const n = orig.hasAlpha ? orig.channels - 1 : orig.channels;
  const max = orig.bitDepth === 16 ? 65535 : 255;
  const a = orig.planes.slice(0, n);
  const b = decoded.samples.slice(0, n);
  const psnr = psnrOfPlanes(a, b, max);
  const samePsnr =
    (psnr === Number.POSITIVE_INFINITY && report.psnr === Number.POSITIVE_INFINITY) ||
    Math.abs(psnr - report.psnr) <= CHECK_TOLERANCE_DB;
  if (!samePsnr)
    return {
      psnr,
      ok: false,
      message: `re-measured PSNR ${psnr.toFixed(3)} dB differs from the reported ${report.psnr.toFixed(3)} dB`,
    };
  if (orig.width < 11 || orig.height < 11 || !Number.isFinite(report.ssim)) return { psnr, ok: true };
  const ssim = ssimPlanes(a, b, orig.width, orig.height, max);
  return Math.abs(ssim - report.ssim) <= CHECK_TOLERANCE_SSIM
    ? { psnr, ssim, ok: true }
    : {
        psnr,
        ssim,
        ok: false,
        message: `re-measured SSIM ${ssim.toFixed(5)} differs from the reported ${report.ssim.toFixed(5)}`,
      };
}
