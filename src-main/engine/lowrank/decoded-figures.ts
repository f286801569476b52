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
import { psnrFromMse, SsimStream } from '../metrics';
import { SquaredErrors } from './band-sums';
import { type DecodedRkf, decodeImageFile, decodeImageFileBands } from './decode-image';
import type { ScanImage } from './scan-image';
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

/**
 * The figures of the grey file `bytes` against the grey scan `img` (max: the largest sample value), measured
 * band by band. With `side` (a runner with a second thread, ./side-jobs), that thread sums the SSIM of each
 * band while this one decodes the next (./ssim-bands); without, it is summed here (../metrics SsimStream):
 * the same value bit for bit. `decoded` decodes the file again, whole, only if a caller reads its samples.
 * @throws FormatError when the file cannot be decoded (naming img.file)
 */
export function measureGreyFile(
  bytes: Uint8Array,
  img: ScanImage,
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
    got = decodeImageFileBands(
      bytes,
      img.file,
      (samples, y0, rows) => {
        const b = samples[0];
        banded?.add(b, rows);
        ssim?.addRows(source, b, rows, y0 * width, 0);
      },
      {},
      sums,
    );
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

/** Σ(source − decoded)² of the grey file `bytes` (the PSNR floor's check), band by band: no decoded plane. */
export function measureGreySse(bytes: Uint8Array, img: ScanImage): number {
  const sums = new SquaredErrors(img.planes[0]);
  decodeImageFileBands(bytes, img.file, () => {}, {}, sums);
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
