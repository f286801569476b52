/** What a decoded scan looks like once it leaves `src-main/node/image`. */

type BitDepth = 8 | 16;

/** Colour model of the stored planes. */
type ColourModel = 'gray' | 'rgb';

/** Metadata kept so `expand` can write it back. */
export interface ImageMeta {
  /** Source container format as sharp reports it: png, tiff, jpeg, webp. */
  format: string;
  /** ICC profile bytes, if the source had one. */
  icc?: Uint8Array;
  /** Resolution in pixels per inch, if the source stated one. */
  density?: number;
  /** EXIF orientation (1–8) of the source. Pixels are already rotated upright; this is kept for the record. */
  orientation?: number;
  /** Number of pages in the source (multi-page TIFF). */
  pages?: number;
  /** The page that was decoded (0-based). */
  page?: number;
}

/**
 * Samples every one of which an f32 holds exactly: float32, or a decoder's 8-bit or 16-bit integers. Kernels that
 * read f32 take them all alike (the whole-scan encoder keeps a decoder's integer samples: issue #12).
 */
export type ExactF32Samples = Float32Array | Uint8Array | Uint16Array;

/** Whether `a` is {@link ExactF32Samples}. */
export function isExactF32Samples(a: ArrayLike<number>): a is ExactF32Samples {
  return a instanceof Float32Array || a instanceof Uint8Array || a instanceof Uint16Array;
}

/** A decoded image: one Float32Array per channel, row-major, values on the source scale (0–255 or 0–65535). */
export interface DecodedImage {
  /** Path it came from, for messages. */
  file: string;
  width: number;
  height: number;
  /** 1 = gray, 2 = gray+alpha, 3 = RGB, 4 = RGBA. */
  channels: 1 | 2 | 3 | 4;
  bitDepth: BitDepth;
  colour: ColourModel;
  hasAlpha: boolean;
  /** One plane per channel, in channel order (R,G,B[,A] or Y[,A]). */
  planes: Float32Array[];
  meta: ImageMeta;
  /** Size of the source file in bytes. */
  inputBytes: number;
  /** Size of the raw samples: width·height·channels·bytesPerSample. */
  rawBytes: number;
  /** SHA-256 (hex) of the interleaved decoded samples, big-endian for 16-bit. See docs/format.md. */
  sourceSha256: string;
}
