/**
 * The .rkf writer of one scan being encoded: the image header from the scan and the options, the planes'
 * factor streams, the optional residual layer, the lossless alpha plane and the ICC profile
 * (../codec/image-file). Both scan encoders (./encode and ./tiled) write through it, and so does the lossless
 * file (./lossless-choice) through {@link exactImageFile}.
 */
import type { DecodedImage } from '../../contract';
import { encodeLosslessPlane } from '../codec/alpha';
import {
  encodePlanes,
  type PlaneHeader,
  quantiserInfo,
  type RkfHeader,
  writeImageFile,
} from '../codec/image-file';
import { EXACT_CODING } from '../codec/lossless-file';
import {
  EXACT_COLOUR_NAMES,
  EXACT_GREY_NAMES,
  encodeExactPlanes,
  exactPlanes,
  exactShapes,
  REVERSIBLE_TRANSFORM,
} from '../codec/lossless-image';
import type { QuantPlane } from '../codec/quantised';
import type { EncodeOptions } from './encode-options';

/** A residual layer: the pixel-domain step and the wavelet plane coder's bytes of each coded plane. */
interface ResidualLayer {
  steps: number[];
  bytes: Uint8Array[];
}

/** Writes the file for given planes; `lossless` only sets the header flag. */
export type ImageBuild = (planes: QuantPlane[], lossless?: boolean, residual?: ResidualLayer) => Uint8Array;

/** A scan's fields the header needs, with its planes (the alpha plane, when there is one, is coded from them). */
export type ScanFacts = Omit<DecodedImage, 'planes'> & { planes: ArrayLike<number>[] };

/**
 * The file writer of a scan whose coded planes are named `names` (gray, or Y, Cb, Cr). The alpha plane is
 * coded losslessly once, here.
 */
export function imageWriter(img: ScanFacts, opts: EncodeOptions, names: string[]): ImageBuild {
  const entropy = opts.entropy ?? 'rc';
  const colour = img.channels >= 3;
  const alpha = alphaBytes(img);
  const header = (planes: QuantPlane[], lossless: boolean, residual?: ResidualLayer): RkfHeader => ({
    ...scanHeader(img, opts, colour ? 'ycbcr-jfif' : 'none', lossless),
    planes: planes.map(
      (p, k): PlaneHeader => ({
        name: names[k],
        tile: p.tile,
        step: p.step,
        meanStep: p.meanStep,
        entropy,
        ...(residual ? { residualStep: residual.steps[k] } : {}),
      }),
    ),
  });
  return (planes, lossless = false, residual) =>
    writeImageFile({
      header: header(planes, lossless, residual),
      planes: encodePlanes(planes, entropy, opts.compressors),
      residuals: residual?.bytes,
      alpha,
      icc: img.meta.icc,
    });
}

/** The scan's alpha plane, coded losslessly (../codec/alpha), when it has one. */
function alphaBytes(img: ScanFacts): Uint8Array | undefined {
  const hasAlpha = img.channels === 2 || img.channels === 4;
  return hasAlpha ? encodeLosslessPlane(img.planes[img.channels - 1], img.width, img.height) : undefined;
}

/** The header's fields every image file has, in the order they are written; `planes` is filled in after. */
function scanHeader(
  img: ScanFacts,
  opts: EncodeOptions,
  colourTransform: RkfHeader['colourTransform'],
  lossless: boolean,
): RkfHeader {
  const hasAlpha = img.channels === 2 || img.channels === 4;
  return {
    format: 'rankfold',
    layout: 'image',
    width: img.width,
    height: img.height,
    bitDepth: img.bitDepth,
    channels: img.channels,
    colourTransform,
    alpha: hasAlpha ? 'lossless' : 'none',
    quantiser: quantiserInfo(),
    planes: [],
    sourceSha256: img.sourceSha256,
    alphaSha256: hasAlpha ? opts.alphaSha256 : undefined,
    lossless,
    metadata: {
      format: img.meta.format,
      density: img.meta.density,
      orientation: img.meta.orientation,
      page: img.meta.page,
      pages: img.meta.pages,
      icc: img.meta.icc ? true : undefined,
    },
    encoder: opts.encoder ?? 'rankfold',
  };
}

/**
 * The lossless file of a scan (container 1.5, ../codec/lossless-file): its grey or reversibly transformed
 * colour planes coded exactly, alpha as in every file. Returns the file and the bytes of its coded planes.
 */
export function exactImageFile(
  img: ScanFacts,
  opts: EncodeOptions,
): { file: Uint8Array; planeBytes: number } {
  const colour = img.channels >= 3;
  const coded = exactPlanes(img.planes, img.bitDepth, colour);
  const names = colour ? EXACT_COLOUR_NAMES : EXACT_GREY_NAMES;
  const header: RkfHeader = {
    ...scanHeader(img, opts, colour ? REVERSIBLE_TRANSFORM : 'none', true),
    planes: names.map((name) => ({ name }) as PlaneHeader),
    coding: EXACT_CODING,
  };
  const exact = encodeExactPlanes(coded, exactShapes(img.width, img.height, img.bitDepth, colour));
  const file = writeImageFile({ header, planes: [], exact, alpha: alphaBytes(img), icc: img.meta.icc });
  return { file, planeBytes: exact.reduce((s, b) => s + b.length, 0) };
}
