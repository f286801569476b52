/**
 * The end of a whole-scan encode (./encode): the residual-only shortcut where it applies (./residual-first),
 * then writing the file, decoding it with the real reader and measuring it, so every figure in the report is
 * measured on the file as written.
 */
import { forgetCodes, recordingCodes } from '../codec/coded-planes';
import { encodePlanes } from '../codec/image-file';
import type { QuantPlane } from '../codec/quantised';
import { psnrPlanes } from '../metrics';
import { type DecodedRkf, decodeImageFile } from './decode-image';
import { type FileFigures, measureGreyFile, measureGreySse } from './decoded-figures';
import type { EncodeOptions } from './encode-options';
import type { EncodedPlanes } from './error-figures';
import type { ImageBuild } from './image-writer';
import { startResidualCheck } from './residual-check';
import { residualFirst } from './residual-first';
import { residualFirstApplies } from './residual-scope';
import type { ScanImage } from './scan-image';
import { runHere, type SideRunner, ssimPlanesSplit } from './side-jobs';
import { readySlots } from './ssim-bands';

/** The coded planes of a scan with their names and weights. */
export interface Prepared extends EncodedPlanes {
  names: string[];
  colour: boolean;
}

export function maxOf(bitDepth: 8 | 16): number {
  return bitDepth === 16 ? 65535 : 255;
}

/**
 * Write the file, decode it with the real reader (once more with the lossless flag when it decodes to the
 * source exactly) and measure it: PSNR, SSIM (once, at full resolution), the achieved Frobenius error, ranks
 * and the base layer's bytes. `file` is the already built file and `decodedFile` its decoding, when the
 * caller has them.
 *
 * How the figures stay measured on the file as written, without fresh memory: the file's bytes are parsed and
 * decoded by the reader (./decode-image), a grey scan's samples a band at a time into reused buffers
 * (./decoded-figures, the SSIM summed on the second thread meanwhile); a residual plane this process just
 * coded is rebuilt from its recorded coefficients, and ./residual-check proves, by running the range decoder on
 * the file's bytes (on the second thread, or in the plane's own memory where it is resident), that those
 * bytes decode to exactly those coefficients.
 */
export function finishScan(
  img: ScanImage,
  prep: Prepared,
  entropy: NonNullable<EncodeOptions['entropy']>,
  opts: EncodeOptions,
  build: ImageBuild,
  basePlanes: QuantPlane[],
  residual: { steps: number[]; bytes: Uint8Array[] } | undefined,
  file?: Uint8Array,
  decodedFile?: DecodedRkf,
) {
  const { width, height } = img;
  const max = maxOf(img.bitDepth);
  const run = opts.side ?? runHere;
  let bytes = file ?? build(basePlanes, false, residual);
  const streamed = !prep.colour && !decodedFile;
  // The SSIM's row slots of the grey file's measuring (./ssim-bands) made now, their pages touched on the
  // other thread, idle while this one starts the file's decode.
  if (streamed && opts.side && width >= 11 && height >= 11 && !measuredFiles.has(bytes))
    readySlots(width, opts.side);
  // The range decoder's check of the recorded residual planes, on the second thread while this one rebuilds
  // and measures (started when the file was built, on the residual-only path); without one, here.
  const started = takeStartedCheck(bytes);
  // The encode is decided: a resident plane is rebuilt over its transform coefficients, and its check decodes
  // in its q region once the rebuild has read q (on the other thread, or here at once: ./residual-check).
  const here = startResidualCheck(
    run,
    residual,
    width,
    height,
    img.file,
    started ? 'resident' : 'all',
    'lend',
  );
  const checked = () => {
    started?.();
    here();
  };
  // A grey scan is measured while its file is decoded band by band (./decoded-figures: no decoded plane);
  // a colour scan, or a file the caller decoded already, on the whole decoded planes.
  const measure = (b: Uint8Array, d?: DecodedRkf) =>
    streamed
      ? (takeMeasured(b) ?? measureGreyFile(b, img, max, opts.side))
      : measureDecoded(d ?? decodeImageFile(b, img.file), img, prep, run);
  let figures = measure(bytes, decodedFile);
  if (figures.lossless) {
    bytes = build(basePlanes, true, residual);
    figures = measure(bytes);
  }
  // The residual-only path recorded its plane encodes (residualFirstFor); the decodes above used them.
  forgetCodes();
  const { psnr, ssim, sse, lossless, decoded } = figures;
  checked();
  const ranks = basePlanes.map((p, k) => ({
    channel: prep.names[k],
    tile: p.tile,
    ranks: Int32Array.from(p.tiles, (t) => t.u.length),
  }));
  const baseBytes = encodePlanes(basePlanes, entropy, opts.compressors).reduce((s, b) => s + b.length, 0);
  return {
    bytes,
    header: decoded.header,
    decoded,
    ranks,
    psnr,
    ssim,
    lossless,
    frobenius: Math.sqrt(sse),
    baseBytes,
  };
}

/**
 * The figures of a decoded file on its whole planes: PSNR and the squared error on this thread while the other
 * computes its share of the SSIM (./side-jobs ssimPlanesSplit).
 */
function measureDecoded(decoded: DecodedRkf, img: ScanImage, prep: Prepared, run: SideRunner): FileFigures {
  const { width, height } = img;
  const max = maxOf(img.bitDepth);
  const colourSamples = img.planes.slice(0, prep.colour ? 3 : 1);
  const lossless = sameSamples(decoded.samples, img.planes);
  const outPlanes = decoded.samples.slice(0, colourSamples.length);
  let figures: { psnr: number; sse: number } | undefined;
  const measure = () => {
    figures = {
      psnr: psnrPlanes(colourSamples, outPlanes, max),
      sse: squaredError(colourSamples, outPlanes),
    };
  };
  const ssim =
    width >= 11 && height >= 11
      ? ssimPlanesSplit(run, colourSamples, outPlanes, width, height, max, measure)
      : Number.NaN;
  if (!figures) measure();
  const { psnr, sse } = figures as { psnr: number; sse: number };
  return { psnr, sse, ssim, lossless, decoded };
}

/** The residual-only shortcut of ./residual-first, where it applies (./residual-scope.ts residualFirstApplies). */
export function residualFirstFor(
  img: ScanImage,
  opts: EncodeOptions,
  prep: Prepared,
  max: number,
  byteBudget: number | undefined,
  build: ImageBuild,
  cancel: () => void,
) {
  const { width, height } = img;
  if (!residualFirstApplies(width, height, opts)) return undefined;
  const kind = opts.budget.kind;
  // The last file checked under a quality floor and its decoding, so the report does not decode it again.
  let last: { bytes: Uint8Array; decoded: DecodedRkf } | undefined;
  // With a second thread, each file built for a byte budget has its residual check started at once.
  let pending: { file: Uint8Array; join: () => void } | undefined;
  const settle = () => {
    const p = pending;
    pending = undefined;
    p?.join();
  };
  const side = opts.side;
  // Its plane encodes are recorded (../codec/coded-planes), so decoding the files they went into (the PSNR
  // floor's check here, the report's in finishScan) rebuilds them without the range decoder, bit-identically.
  const quietly = () => {
    try {
      settle();
    } catch {
      // The encode failed already (e.g. cancelled): that error is the one to report.
    }
  };
  const r = recordingCodes(() =>
    residualFirstOrSettle(quietly, {
      planes: prep.planes,
      weights: prep.weights,
      width,
      height,
      maxValue: max,
      budget: opts.budget,
      byteBudget,
      build: (planes, residual, decided) => {
        const file = build(planes, false, residual);
        if (side && kind !== 'psnr') {
          settle();
          // Every plane checked on the second thread, beside this one's measuring (./residual-check); in its
          // plane's coefficient memory once the encode is decided.
          pending = {
            file,
            join: startResidualCheck(side, residual, width, height, img.file, 'all', decided ? 'lend' : true),
          };
        }
        return file;
      },
      side,
      measuredSse: (bytes) => {
        // A grey file is measured band by band (./decoded-figures), all its figures in that one pass (its SSIM
        // on the second thread): kept with the bytes, so the report does not decode the kept file again.
        if (!prep.colour) {
          const figures = measureGreyFile(bytes, img, max, side);
          measuredFiles.set(bytes, figures);
          return figures.sse;
        }
        last = { bytes, decoded: decodeImageFile(bytes, img.file) };
        return decodedSse(last.decoded, img, prep);
      },
      cancel,
    }),
  );
  if (!r) forgetCodes();
  // A PSNR floor's file is decided only once measured (a file under the floor is coded again): the kept one is
  // checked now, on the second thread in its planes' coefficient memory. Checked when built, it was decoded in
  // that thread's own memory (about 5 fresh bytes a pixel), which kept it from the SSIM of the measuring: this
  // thread then summed it alone.
  if (kind === 'psnr' && side && r?.file)
    startedChecks.set(r.file, startResidualCheck(side, r.residual, width, height, img.file, 'all', 'lend'));
  // The kept file's check is joined by finishScan; any other is joined now (its answer must not linger).
  else if (pending && r?.file === pending.file) startedChecks.set(pending.file, pending.join);
  else settle();
  return r && { ...r, decoded: last && last.bytes === r.file ? last.decoded : undefined };
}

/** residualFirst, joining the pending residual check (`settle`) when it throws. */
function residualFirstOrSettle(settle: () => void, inp: Parameters<typeof residualFirst>[0]) {
  try {
    return residualFirst(inp);
  } catch (err) {
    settle();
    throw err;
  }
}

/** Figures of grey files measured when they were built (residualFirstFor), by the file, until finishScan. */
const measuredFiles = new WeakMap<Uint8Array, FileFigures>();

function takeMeasured(file: Uint8Array): FileFigures | undefined {
  const f = measuredFiles.get(file);
  measuredFiles.delete(file);
  return f;
}

/** Residual checks started when a file was built (residualFirstFor), by the file, until finishScan joins them. */
const startedChecks = new WeakMap<Uint8Array, () => void>();

function takeStartedCheck(file: Uint8Array): (() => void) | undefined {
  const join = startedChecks.get(file);
  startedChecks.delete(file);
  return join;
}

/** Σ (a − b)² over every sample of every plane, in one running sum (plane by plane, in order). */
function squaredError(a: ArrayLike<number>[], b: Float32Array[]): number {
  let sse = 0;
  for (let c = 0; c < a.length; c++)
    for (let i = 0; i < a[c].length; i++) {
      const d = a[c][i] - b[c][i];
      sse += d * d;
    }
  return sse;
}

function sameSamples(a: Float32Array[], b: ArrayLike<number>[]): boolean {
  if (a.length !== b.length) return false;
  for (let c = 0; c < a.length; c++)
    for (let i = 0; i < a[c].length; i++) if (a[c][i] !== b[c][i]) return false;
  return true;
}

/** Weighted squared error of a built file against the source in the factor domain's weighting (RGB SSE). */
export function measuredSse(bytes: Uint8Array, img: ScanImage, prep: Prepared): number {
  if (!prep.colour) return measureGreySse(bytes, img);
  return decodedSse(decodeImageFile(bytes, img.file), img, prep);
}

export function decodedSse(d: DecodedRkf, img: ScanImage, prep: Prepared): number {
  const nc = prep.colour ? 3 : 1;
  let s = 0;
  for (let c = 0; c < nc; c++)
    for (let i = 0; i < img.planes[c].length; i++) {
      const e = img.planes[c][i] - d.samples[c][i];
      s += e * e;
    }
  return s;
}
