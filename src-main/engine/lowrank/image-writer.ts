/**
 * The .rkf writer of one scan being encoded: the image header from the scan and the options, the planes'
 * factor streams, the optional residual layer, the lossless alpha plane and the ICC profile
 * (../codec/image-file). Both scan encoders (./encode and ./tiled) write through it.
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
  const { width, height } = img;
  const entropy = opts.entropy ?? 'rc';
  const colour = img.channels >= 3;
  const hasAlpha = img.channels === 2 || img.channels === 4;
  const alpha = hasAlpha ? encodeLosslessPlane(img.planes[img.channels - 1], width, height) : undefined;
  const header = (planes: QuantPlane[], lossless: boolean, residual?: ResidualLayer): RkfHeader => ({
    format: 'rankfold',
    layout: 'image',
    width,
    height,
    bitDepth: img.bitDepth,
    channels: img.channels,
    colourTransform: colour ? 'ycbcr-jfif' : 'none',
    alpha: hasAlpha ? 'lossless' : 'none',
    quantiser: quantiserInfo(),
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
