/**
 * The report's figures of a grey scan's file, measured while the file is decoded band by band
 * (./decode-image decodeImageFileBands) instead of on a decoded copy of the whole plane: the squared error,
 * the PSNR, the SSIM and whether the file decodes to the source exactly. Each is accumulated in the order the
 * whole-plane functions use (../metrics psnrPlanes through SseStream, SsimStream for ssim, one running sum
 * for the Frobenius error), so the values are the same bit for bit; the decoded samples only ever exist one
 * band at a time, in buffers reused from band to band. The decode is the reader's own: the figures are still
 * measured on the file as written.
 *
 * Why: on the machines this runs on, the first touch of a fresh page costs more than the arithmetic done on
 * it, and a decoded copy of an 8-megapixel plane is 33 MB of fresh pages per decode.
 */
import type { DecodedImage } from '../../contract';
import { psnrFromMse, SsimStream } from '../metrics';
import { type DecodedRkf, decodeImageFile, decodeImageFileBands } from './decode-image';
import type { SideRunner } from './side-jobs';
import { SsimBands } from './ssim-bands';

/** What the report takes from a decoded file. */
export interface FileFigures {
  psnr: number;
  /** Σ(source − decoded)² over the coded channels, in one running sum (the Frobenius error's square). */
  sse: number;
  /** NaN below the SSIM window (11×11). */
  ssim: number;
  /** Whether every channel (alpha included) decodes to the source exactly. */
  lossless: boolean;
  decoded: DecodedRkf;
}

/** SSIM window side of ../metrics's defaults (Wang et al. 2004: 11×11). */
const SSIM_SIDE = 11;
/** ../metrics SseStream's block of samples: the PSNR's squared errors are summed per block, then over blocks. */
const SSE_BLOCK = 4096;

/**
 * The figures of the grey file `bytes` against the grey scan `img` (max: the largest sample value), measured
 * band by band. With `side` (a runner with a second thread, ./side-jobs), that thread sums the SSIM of each
 * band while this one decodes the next (./ssim-bands); without, it is summed here (../metrics SsimStream):
 * the same value bit for bit. `decoded` decodes the file again, whole, only if a caller reads its samples.
 * @throws FormatError when the file cannot be decoded (naming img.file)
 */
export function measureGreyFile(
  bytes: Uint8Array,
  img: DecodedImage,
  max: number,
  side?: SideRunner,
): FileFigures {
  const { width, height } = img;
  const source = img.planes[0];
  const sums = new SquaredErrors(source);
  const windowed = width >= SSIM_SIDE && height >= SSIM_SIDE;
  const banded = windowed && side ? new SsimBands(side, source, width, height, max) : undefined;
  const ssim = windowed && !side ? new SsimStream(width, height, max) : undefined;
  let got: ReturnType<typeof decodeImageFileBands>;
  try {
    got = decodeImageFileBands(bytes, img.file, (samples, y0, rows) => {
      const b = samples[0];
      banded?.add(b, rows);
      sums.add(b, y0 * width, rows * width);
      ssim?.addRows(source, b, rows, y0 * width, 0);
    });
  } catch (err) {
    banded?.drop();
    throw err;
  }
  const { alpha, ...facts } = got;
  // As sameSamples over every channel: the same channel count, and the alpha plane equal too.
  const channels = 1 + (alpha ? 1 : 0);
  const lossless =
    sums.same && channels === img.planes.length && (!alpha || sameValues(alpha, img.planes[1]));
  return {
    psnr: psnrFromMse(sums.blocked() / source.length, max),
    sse: sums.running,
    ssim: banded ? banded.value() : ssim ? ssim.value() : Number.NaN,
    lossless,
    decoded: lazilyDecoded(facts, bytes, img.file),
  };
}

/**
 * Both sums of squared errors of a band, from one difference per sample: `running`, one running sum in sample
 * order (the Frobenius error's square, as squaredError in ./scan-finish), and the PSNR's, summed per block of
 * SSE_BLOCK samples counted from the plane's start and then over blocks, as ../metrics SseStream (and so sse)
 * adds them; plus whether every decoded sample equals the source's.
 */
class SquaredErrors {
  running = 0;
  same = true;
  private sum = 0;
  private block = 0;
  private inBlock = 0;

  constructor(private readonly source: Float32Array) {}

  /** Add the decoded samples b[0 … len − 1], which are the source's from `at`. */
  add(b: Float32Array, at: number, len: number): void {
    const source = this.source;
    let running = this.running;
    let differs = 0;
    for (let i = 0; i < len; ) {
      const take = Math.min(len - i, SSE_BLOCK - this.inBlock);
      let block = this.block;
      for (let k = i; k < i + take; k++) {
        const d = source[at + k] - b[k];
        const dd = d * d;
        block += dd;
        running += dd;
        differs += dd;
      }
      i += take;
      this.inBlock += take;
      if (this.inBlock === SSE_BLOCK) {
        this.sum += block;
        this.block = 0;
        this.inBlock = 0;
      } else this.block = block;
    }
    this.running = running;
    if (differs !== 0) this.same = false;
  }

  /** The PSNR's sum: the full blocks' sums, plus the partial last block's. */
  blocked(): number {
    return this.inBlock > 0 ? this.sum + this.block : this.sum;
  }
}

/** Σ(source − decoded)² of the grey file `bytes` (the PSNR floor's check), band by band: no decoded plane. */
export function measureGreySse(bytes: Uint8Array, img: DecodedImage): number {
  const sums = new SquaredErrors(img.planes[0]);
  decodeImageFileBands(bytes, img.file, (samples, y0, rows) => {
    sums.add(samples[0], y0 * img.width, rows * img.width);
  });
  return sums.running;
}

/** A decoded file whose samples are decoded (with decodeImageFile, whole) when first read, then kept. */
function lazilyDecoded(facts: Omit<DecodedRkf, 'samples'>, bytes: Uint8Array, file: string): DecodedRkf {
  let samples: Float32Array[] | undefined;
  const d = { ...facts } as DecodedRkf;
  Object.defineProperty(d, 'samples', {
    enumerable: true,
    get: () => {
      samples ??= decodeImageFile(bytes, file).samples;
      return samples;
    },
  });
  return d;
}

function sameValues(a: ArrayLike<number>, b: ArrayLike<number>): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}
