/**
 * `--expand-check`: decode the written .rkf again (through the codec's own reader, which validates every chunk CRC) and measure PSNR against
 * the original. The file passes when the sizes agree and the PSNR is within {@link CHECK_TOLERANCE_DB} of
 * the PSNR the compressor reported.
 */
import type { CompressOptions, CompressReport } from '../../contract';
import { decodeImage } from '../image/decode';
import { loadReader } from './codec';
import type { ExpandCheck } from './job';

/**
 * Agreement required between the reported and the re-measured PSNR. Both are computed on the same decoded
 * samples, so they differ only by summation order in float64; 0.01 dB is far above that and far below
 * any real defect (one grey level of error on 1% of an 8-bit image's pixels already moves PSNR more).
 */
export const CHECK_TOLERANCE_DB = 0.01;

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
  const psnr = psnrOfPlanes(orig.planes, decoded.samples, orig.bitDepth === 16 ? 65535 : 255);
  const same =
    (psnr === Number.POSITIVE_INFINITY && report.psnr === Number.POSITIVE_INFINITY) ||
    Math.abs(psnr - report.psnr) <= CHECK_TOLERANCE_DB;
  return same
    ? { psnr, ok: true }
    : {
        psnr,
        ok: false,
        message: `re-measured PSNR ${psnr.toFixed(3)} dB differs from the reported ${report.psnr.toFixed(3)} dB`,
      };
}
