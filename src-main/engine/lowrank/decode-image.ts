/**
 * Decode an .rkf image file (layout "image", ../codec/image-file) into samples: each coded plane's
 * low-rank base rebuilt band by band (plus its residual layer, when there is one), then the colour
 * transform undone, rounded and clamped into integer samples. A lossless file's planes are decoded exactly
 * instead (../codec/lossless-file).
 */
import { FormatError } from '../../contract/errors';
import { decodeLosslessPlane } from '../codec/alpha';
import type { ContainerView } from '../codec/container';
import { storedIcc } from '../codec/icc-pack';
import {
  decodeResiduals,
  type ReadOptions,
  type RkfHeader,
  readBasePlane,
  readImageHeader,
} from '../codec/image-file';
import { decodeExactSamples, isExactFile } from '../codec/lossless-file';
import { flatBase, reconstructRows } from '../codec/quantise';
import { tileGrid } from '../codec/quantised';
import { giveBackWork } from '../codec/resident-plane';
import { roundInto, type SampleOut, ycbcrToRgbSamples } from '../colour';
import type { SquaredErrors } from './band-sums';

export interface DecodedRkf {
  header: RkfHeader;
  width: number;
  height: number;
  bitDepth: 8 | 16;
  channels: 1 | 2 | 3 | 4;
  /** Samples per output channel (gray[,A] or R,G,B[,A]), rounded and clamped. */
  samples: Float32Array[];
  icc?: Uint8Array;
}

/**
 * Decode a whole image file. Each step names the file and the problem on failure.
 * The samples are rebuilt band by band and rounded straight into Float32 arrays holding the integers
 * {@link decodeImageFileSamples} gives: no full-size float64 plane and no integer copy is formed. The arrays
 * live in shared memory where the runtime has it, so a second thread reads them without a copy (the
 * report's SSIM, ./side-jobs).
 * @throws FormatError
 */
export function decodeImageFile(bytes: Uint8Array, file: string, opts: ReadOptions = {}): DecodedRkf {
  return decodeWith(bytes, file, opts, sharedFloat32);
}

/** A zeroed Float32Array of `n` values, on a SharedArrayBuffer when the runtime has one. */
export function sharedFloat32(n: number): Float32Array {
  return typeof SharedArrayBuffer === 'function'
    ? new Float32Array(new SharedArrayBuffer(n * Float32Array.BYTES_PER_ELEMENT))
    : new Float32Array(n);
}

/** Integer samples of one channel: 8-bit scans in Uint8Array, 16-bit in Uint16Array. */
export type SampleArray = Uint8Array | Uint16Array;

/** A decoded file whose samples stay integers (1 or 2 bytes per sample). */
export interface DecodedRkfSamples extends Omit<DecodedRkf, 'samples'> {
  samples: SampleArray[];
}

/** Rows rebuilt at a time when a plane is not tiled (the tile height otherwise). */
const BAND_ROWS = 64;
/**
 * Rows at a time when a plane that is not tiled is decoded into reused band buffers
 * ({@link decodeImageFileBands}): fewer than BAND_ROWS, so the buffers (float64 rows and float32 samples) are
 * 0.6 MB on a 3300-wide scan, not 2.5 MB of fresh pages. Each row is rebuilt on its own
 * (../codec/quantise reconstructRows), so the band height does not change any value.
 */
const STREAM_BAND_ROWS = 16;

/**
 * Decode a whole image file into integer samples, band by band: per band of tile rows, each coded plane's
 * rows are rebuilt in float64, converted (YCbCr → RGB), rounded and clamped into the output arrays. Memory
 * is the output samples plus O(band·width), and the values equal the whole-plane reconstruction's.
 * @throws FormatError
 */
export function decodeImageFileSamples(
  bytes: Uint8Array,
  file: string,
  opts: ReadOptions = {},
): DecodedRkfSamples {
  return decodeWith(bytes, file, opts, (n, bitDepth) =>
    bitDepth === 16 ? new Uint16Array(n) : new Uint8Array(n),
  );
}

/** {@link decodeImageFileSamples} into output arrays made by `alloc` (integer, or float32 holding integers). */
function decodeWith<S extends SampleOut>(
  bytes: Uint8Array,
  file: string,
  opts: ReadOptions,
  alloc: (n: number, bitDepth: 8 | 16) => S,
): Omit<DecodedRkf, 'samples'> & { samples: S[] } {
  const { view, header } = readImageHeader(bytes, file, opts);
  const { width, height, bitDepth } = header;
  const n = width * height;
  const count = isExactFile(header) ? (header.channels >= 3 ? 3 : 1) : codedChannels(header);
  const samples = Array.from({ length: count }, () => alloc(n, bitDepth));
  if (isExactFile(header)) decodeExactSamples(view, header, file, samples);
  else decodeRows(view, header, file, opts, bandRows(header), samples, true);
  return withAlpha(view, header, file, alloc, samples);
}

/** Output channels of the coded planes: R, G, B for a colour transform, else grey. */
const codedChannels = (header: RkfHeader) => (header.colourTransform === 'ycbcr-jfif' ? 3 : 1);

/**
 * {@link decodeImageFile} a band of rows at a time, without keeping the planes: each band's samples (every
 * output channel but alpha, rounded and clamped, as decodeImageFile gives them) are written from index 0 of
 * band-sized float32 buffers, reused from band to band, and handed to `onBand` with the band's first row and
 * row count. A lossless file is decoded whole and handed over as one band. The alpha plane, when there is
 * one, is decoded whole and returned. Memory: O(band·width) besides the file's own decoding. With `errors`,
 * each band's first channel is measured against its source as it is written (./band-sums: in the decode's own
 * pass where the residual plane is resident), before `onBand` sees it.
 * @throws FormatError
 */
export function decodeImageFileBands(
  bytes: Uint8Array,
  file: string,
  onBand: (samples: Float32Array[], y0: number, rows: number) => void,
  opts: ReadOptions = {},
  errors?: SquaredErrors,
): Omit<DecodedRkf, 'samples'> & { alpha?: Float32Array } {
  const { view, header } = readImageHeader(bytes, file, opts);
  const { width, height, bitDepth } = header;
  const float32 = (m: number) => new Float32Array(m);
  let decoded: ReturnType<typeof withAlpha<Float32Array>>;
  if (isExactFile(header)) {
    const whole = Array.from({ length: header.channels >= 3 ? 3 : 1 }, () => float32(width * height));
    decodeExactSamples(view, header, file, whole);
    errors?.add(whole[0], 0, width * height);
    onBand(whole, 0, height);
    decoded = withAlpha(view, header, file, float32, whole);
  } else {
    const band = bandRows(header, STREAM_BAND_ROWS);
    const out = Array.from({ length: codedChannels(header) }, () => float32(band * width));
    decodeRows(view, header, file, opts, band, out, false, onBand, errors);
    decoded = withAlpha(view, header, file, float32, out);
  }
  const count = isExactFile(header) && header.channels >= 3 ? 3 : codedChannels(header);
  const { samples, ...rest } = decoded;
  return { ...rest, alpha: samples.length > count ? samples[count] : undefined };
}

/** Rows rebuilt at a time: the tile height of a tiled plane, else `untiled` (at most the height). */
function bandRows(header: RkfHeader, untiled = BAND_ROWS): number {
  const tile = header.planes[0].tile;
  return Math.min(header.height, tile > 0 ? tile : untiled);
}

/**
 * The coded planes rebuilt `band` rows at a time into `samples` (float64 rows of the base, plus the residual layer,
 * then the colour transform undone, rounded and clamped): written at the band's place in whole planes
 * (`whole`) or from index 0 of band-sized arrays, each band's first channel measured into `errors` (band-sized
 * arrays only), and each band handed to `onBand`.
 */
function decodeRows<S extends SampleOut>(
  view: ContainerView,
  header: RkfHeader,
  file: string,
  opts: ReadOptions,
  band: number,
  samples: S[],
  whole: boolean,
  onBand?: (samples: S[], y0: number, rows: number) => void,
  errors?: SquaredErrors,
): void {
  const { width, height, bitDepth } = header;
  const planeFail = (k: number, err: unknown): never => {
    if (err instanceof FormatError) throw err;
    throw new FormatError(
      file,
      `plane ${k} (${header.planes[k].name}) cannot be decoded: ${(err as Error).message}`,
    );
  };
  const quant = header.planes.map((_, k) => {
    try {
      const q = readBasePlane(view, header, k, opts.compressors);
      const rects = tileGrid(width, height, q.tile);
      if (rects.length !== q.tiles.length)
        throw new RangeError('tile count does not match the plane geometry');
      return { q, rects };
    } catch (err) {
      return planeFail(k, err);
    }
  });
  const residual = decodeResiduals(view, header, file);
  const colour = header.colourTransform === 'ycbcr-jfif';
  const bufs = quant.map(() => new Float64Array(band * width));
  // A grey scan into float32 samples (the report's decode) adds its residual while rounding, in one loop.
  const grey = !colour && samples[0] instanceof Float32Array ? (samples[0] as Float32Array) : undefined;
  // A grey residual-only file's base is one value (../codec/quantise flatBase): added as it is, no rows rebuilt.
  const flat = quant.map(({ q }, k) => (grey && residual[k] ? flatBase(q) : undefined));
  for (let y0 = 0; y0 < height; y0 += band) {
    const y1 = Math.min(height, y0 + band);
    const len = (y1 - y0) * width;
    const at = y0 * width;
    const outAt = whole ? at : 0;
    let measured = false;
    quant.forEach(({ q, rects }, k) => {
      const r = residual[k];
      const f = flat[k];
      if (grey && r && f !== undefined) {
        const max = bitDepth === 16 ? 65535 : 255;
        // A resident residual: decoded and measured in one kernel pass (./band-sums).
        measured = !!errors?.addFlatResident(r, f, at, len, max, grey, outAt);
        if (!measured) greyFlatInto(f, r, at, len, max, grey, outAt);
        return;
      }
      try {
        reconstructRows(q, rects, y0, y1, bufs[k]);
      } catch (err) {
        planeFail(k, err);
      }
      // Two layers: base + residual in float64, before any rounding (the same sum decodeImageLayers gives).
      if (grey) {
        greyInto(bufs[k], r, at, len, bitDepth === 16 ? 65535 : 255, grey, outAt);
        return;
      }
      if (r) {
        const b = bufs[k];
        for (let i = 0; i < len; i++) b[i] += r[at + i];
      }
    });
    if (!grey) planesToSamples(bufs, colour, len, bitDepth, samples, outAt);
    if (errors && !measured) errors.add(samples[0] as Float32Array, at, len);
    onBand?.(samples, y0, y1 - y0);
  }
  // The residual planes are not used past here: a plane rebuilt in its coder's memory gives that memory back.
  for (const r of residual) if (r) giveBackWork(r);
}

/**
 * out[outAt + i] = clamp(round(base[i] + residual[at + i])) for i < len (no residual: of base[i] alone): the
 * sum, rounding and clamping of the two-pass path (base += residual, then ../colour roundInto), in one
 * monomorphic loop over float64 in and float32 out, so the same values.
 */
function greyInto(
  base: Float64Array,
  residual: Float64Array | undefined,
  at: number,
  len: number,
  max: number,
  out: Float32Array,
  outAt: number,
): void {
  if (residual)
    for (let i = 0; i < len; i++) {
      const v = Math.round(base[i] + residual[at + i]);
      out[outAt + i] = v > 0 ? (v > max ? max : v) : 0;
    }
  else
    for (let i = 0; i < len; i++) {
      const v = Math.round(base[i]);
      out[outAt + i] = v > 0 ? (v > max ? max : v) : 0;
    }
}

/**
 * {@link greyInto} of a base whose every value is `base` (../codec/quantise flatBase): the same sum, rounding
 * and clamping, without reading a rebuilt band.
 */
function greyFlatInto(
  base: number,
  residual: Float64Array,
  at: number,
  len: number,
  max: number,
  out: Float32Array,
  outAt: number,
): void {
  for (let i = 0; i < len; i++) {
    const v = Math.round(base + residual[at + i]);
    out[outAt + i] = v > 0 ? (v > max ? max : v) : 0;
  }
}

/** The decoded file: `samples` with the alpha plane, when there is one, decoded and appended. */
function withAlpha<S extends SampleOut>(
  view: ContainerView,
  header: RkfHeader,
  file: string,
  alloc: (n: number, bitDepth: 8 | 16) => S,
  samples: S[],
): Omit<DecodedRkf, 'samples'> & { samples: S[] } {
  const { width, height, bitDepth } = header;
  const n = width * height;
  const max = bitDepth === 16 ? 65535 : 255;
  if (header.alpha === 'lossless') {
    let alpha: Float32Array;
    try {
      alpha = decodeLosslessPlane(view.payload(view.find('ALPH')), width, height, max);
    } catch (err) {
      throw new FormatError(file, `the alpha plane cannot be decoded: ${(err as Error).message}`);
    }
    const a = bitDepth === 16 ? new Uint16Array(n) : new Uint8Array(n);
    a.set(alpha);
    const out = alloc(n, bitDepth);
    // A loop, not out.set(a): set between element types is several times slower in V8.
    for (let i = 0; i < n; i++) out[i] = a[i];
    samples.push(out);
  }
  return {
    header,
    width,
    height,
    bitDepth,
    channels: header.channels,
    samples,
    icc: storedIcc(view, file),
  };
}

/**
 * `len` values of each coded plane (gray, or Y, Cb, Cr when `colour`) into integer samples from `at`:
 * YCbCr → RGB for colour, then rounded and clamped to the bit depth.
 */
export function planesToSamples(
  planes: Float64Array[],
  colour: boolean,
  len: number,
  bitDepth: 8 | 16,
  out: SampleOut[],
  at: number,
): void {
  if (colour) ycbcrToRgbSamples(planes[0], planes[1], planes[2], len, bitDepth, out[0], out[1], out[2], at);
  else roundInto(planes[0], len, bitDepth === 16 ? 65535 : 255, out[0], at);
}
