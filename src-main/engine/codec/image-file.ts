/**
 * A single scan in the .rkf container (layout "image"): the HEAD JSON header, one PLNE chunk per coded
 * plane (Y or gray, Cb, Cr) holding the low-rank base layer, an optional RSDL chunk per coded plane holding
 * the residual layer (the source minus the decoded base, wavelet-coded; container version 1.2), an ALPH
 * chunk for a lossless alpha plane and an ICCP chunk for the ICC profile. A lossless file (container 1.5,
 * ./lossless-file) holds one EXCT chunk per coded plane instead of PLNE and RSDL. Reading validates the header
 * against the chunks before anything is decoded. This module writes and reads the chunks and decodes each
 * plane's layers; lowrank/decode-image.ts turns them into samples (colour transform, rounding).
 */
import { FormatError } from '../../contract/errors';
import { asciiJson, parseAsciiJson } from './ascii-json';
import { decodeCompactHeader, encodeCompactHeader } from './compact-header';
import {
  type Chunk,
  type ContainerView,
  readContainer,
  refuseUnknownCritical,
  VERSION_MINOR,
  VERSION_MINOR_CODER2,
  VERSION_MINOR_LOSSLESS,
  writeContainer,
} from './container';
import { type ByteCompressor, decodePlane, type EntropyId, encodePlane } from './entropy';
import { packIcc } from './icc-pack';
import { checkExactHeader, EXACT_CHUNK, EXACT_CODING, isExactFile } from './lossless-file';
import { DEAD_ZONE, reconstructRows } from './quantise';
import { type QuantPlane, tileGrid } from './quantised';
import { RESIDUAL_MAX_PIXELS } from './residual-limit';
import { decodePlane as decodeWaveletPlane } from './wavelet-plane';

type ColourTransform = 'none' | 'ycbcr-jfif' | 'rct';

export interface PlaneHeader {
  /** 'gray', 'Y', 'Cb' or 'Cr'. */
  name: string;
  tile: number;
  step: number;
  meanStep: number;
  entropy: EntropyId;
  /**
   * Pixel-domain quantiser step of this plane's residual layer (the wavelet plane coder); absent when the
   * plane has no residual (then there is no RSDL chunk for it).
   */
  residualStep?: number;
}

export interface RkfHeader {
  format: 'rankfold';
  /** 'image' now; the stack layout adds 'stack'. */
  layout: 'image' | string;
  width: number;
  height: number;
  bitDepth: 8 | 16;
  /** Channels of the source and of the expanded output: 1 gray, 2 gray+alpha, 3 RGB, 4 RGBA. */
  channels: 1 | 2 | 3 | 4;
  colourTransform: ColourTransform;
  alpha: 'none' | 'lossless';
  quantiser: { kind: 'uniform-dead-zone'; weighting: 'sigma'; deadZone: number };
  planes: PlaneHeader[];
  /** SHA-256 (hex) of the decoded source samples, interleaved, 16-bit big-endian. */
  sourceSha256: string;
  /** SHA-256 (hex) of the alpha plane alone (stored losslessly), when there is one. */
  alphaSha256?: string;
  /** True when the expanded samples equal the source exactly (the hash can then be checked). */
  lossless: boolean;
  metadata: {
    format?: string;
    density?: number;
    orientation?: number;
    page?: number;
    pages?: number;
    icc?: boolean;
  };
  encoder: string;
  /**
   * "exact" in a lossless file (./lossless-file): its planes are EXCT chunks, and each entry of `planes`
   * carries only its name. Absent in every other file.
   */
  coding?: typeof EXACT_CODING;
}

/** Default largest image a reader accepts: 2^28 pixels, like the decoder's pixel limit. */
export const MAX_PIXELS = 268_402_689;
const MAX_SIDE = 1 << 20;

export interface ImageFileParts {
  header: RkfHeader;
  planes: Uint8Array[];
  /** Residual layer per coded plane (wavelet plane coder bytes), or undefined for a plane without one. */
  residuals?: Array<Uint8Array | undefined>;
  alpha?: Uint8Array;
  icc?: Uint8Array;
  /** The coded planes of a lossless file (./lossless-image); `planes` is then empty. */
  exact?: Uint8Array[];
}

export function quantiserInfo(): RkfHeader['quantiser'] {
  return { kind: 'uniform-dead-zone', weighting: 'sigma', deadZone: DEAD_ZONE };
}

/** Encode the planes' factor streams (one per plane) for a header. */
export function encodePlanes(
  planes: QuantPlane[],
  entropy: EntropyId,
  compressors: ByteCompressor[] = [],
): Uint8Array[] {
  return planes.map((p) => encodePlane(p, entropy, compressors));
}

export function writeImageFile(parts: ImageFileParts): Uint8Array {
  if (parts.exact) return writeExactFile(parts, parts.exact);
  const chunks: Chunk[] = [{ type: 'HEAD', id: 0, payload: asciiJson(parts.header) }];
  if (parts.icc) chunks.push({ type: 'ICCP', id: 0, payload: parts.icc });
  parts.planes.forEach((payload, id) => {
    chunks.push({ type: 'PLNE', id, payload });
  });
  let residual = false;
  parts.residuals?.forEach((payload, id) => {
    if (!payload) return;
    if (parts.header.planes[id]?.residualStep === undefined)
      throw new RangeError(`plane ${id} has residual data but no residual step in its header`);
    chunks.push({ type: RESIDUAL, id, payload });
    residual = true;
  });
  if (parts.alpha) chunks.push({ type: 'ALPH', id: 0, payload: parts.alpha });
  // Only a two-layer file is version 1.2; every other image file stays 1.1, byte for byte.
  // A two-layer file is version 1.3 (compact HEAD, packed ICC, coefficient coder 2); others stay 1.1.
  if (residual) {
    chunks[0] = { type: 'HEAD', id: 0, payload: encodeCompactHeader(parts.header) };
    if (parts.icc) chunks[1] = { type: 'ICCP', id: 0, payload: packIcc(parts.icc) };
  }
  return writeContainer(chunks, residual ? VERSION_MINOR_CODER2 : VERSION_MINOR);
}

/** A lossless file: compact HEAD, packed ICC, one EXCT chunk per coded plane, ALPH; version 1.5. */
function writeExactFile(parts: ImageFileParts, exact: Uint8Array[]): Uint8Array {
  if (parts.header.coding !== EXACT_CODING || parts.planes.length || parts.residuals?.some(Boolean))
    throw new RangeError('a lossless file has exact planes only, and a header that says so');
  const chunks: Chunk[] = [{ type: 'HEAD', id: 0, payload: encodeCompactHeader(parts.header) }];
  if (parts.icc) chunks.push({ type: 'ICCP', id: 0, payload: packIcc(parts.icc) });
  exact.forEach((payload, id) => {
    chunks.push({ type: EXACT_CHUNK, id, payload });
  });
  if (parts.alpha) chunks.push({ type: 'ALPH', id: 0, payload: parts.alpha });
  return writeContainer(chunks, VERSION_MINOR_LOSSLESS);
}

/** Chunk type of a coded plane's residual layer (critical: a reader that does not know it must refuse). */
const RESIDUAL = 'RSDL';

/** Largest scan (pixels) that may carry a residual layer (./residual-limit.ts). */
export { RESIDUAL_MAX_PIXELS } from './residual-limit';

/** Chunk types of the image layout (the container's own INDX and fchk aside). */
const KNOWN = new Set(['HEAD', 'PLNE', 'ALPH', 'ICCP', RESIDUAL, EXACT_CHUNK]);

export interface ReadOptions {
  compressors?: ByteCompressor[];
  maxPixels?: number;
}

/** Whether v is an integer in [lo, hi]. */
const int = (v: unknown, lo: number, hi: number) =>
  Number.isInteger(v) && (v as number) >= lo && (v as number) <= hi;

/** Parse and validate the header of a container (all CRCs are checked). */
export function readImageHeader(
  bytes: Uint8Array,
  file: string,
  opts: ReadOptions = {},
): { view: ContainerView; header: RkfHeader } {
  const view = readContainer(bytes, file);
  const fail = (problem: string): never => {
    throw new FormatError(file, problem);
  };
  let header: RkfHeader;
  const compact = view.version.minor >= VERSION_MINOR_CODER2;
  try {
    header = (compact ? decodeCompactHeader : parseAsciiJson)(view.payload(0)) as RkfHeader;
  } catch {
    return fail(`is damaged: the header (HEAD) is not valid ${compact ? 'compact header' : 'ASCII JSON'}`);
  }
  if (typeof header !== 'object' || header === null || header.format !== 'rankfold')
    fail('has a header that is not a Rankfold header');
  if (header.layout !== 'image')
    fail(
      `has layout "${String(header.layout)}", which \`expand\` reads only with --frame or the stack reader (this reader handles "image")`,
    );
  refuseUnknownCritical(view, KNOWN, file, 'image');
  const { width, height } = header;
  if (!int(width, 1, MAX_SIDE) || !int(height, 1, MAX_SIDE))
    fail(`has impossible dimensions ${String(width)}×${String(height)} (each side must be 1–${MAX_SIDE})`);
  const maxPixels = opts.maxPixels ?? MAX_PIXELS;
  if (width * height > maxPixels)
    fail(
      `declares ${width}×${height} = ${width * height} pixels, over the limit of ${maxPixels}; raise it with --pixel-limit if the file is trusted`,
    );
  if (header.bitDepth !== 8 && header.bitDepth !== 16)
    fail(`declares bit depth ${String(header.bitDepth)}; only 8 and 16 are valid`);
  if (!int(header.channels, 1, 4)) fail(`declares ${String(header.channels)} channels; 1–4 are valid`);
  const hasAlpha = header.channels === 2 || header.channels === 4;
  if ((header.alpha === 'lossless') !== hasAlpha)
    fail('is inconsistent: its alpha setting does not match its channel count');
  if (header.coding !== undefined && header.coding !== EXACT_CODING)
    fail(`declares plane coding "${String(header.coding)}", which this Rankfold does not know`);
  if (isExactFile(header)) checkExactHeader(view, header, fail);
  else checkLayeredPlanes(view, header, fail);
  // Exactly the chunks the header calls for: ALPH iff alpha, at most one ICCP.
  const count = (type: string) => view.entries.filter((e) => e.type === type).length;
  if (hasAlpha && view.find('ALPH', 0) < 0)
    fail('is truncated or damaged: the alpha plane (ALPH) is missing');
  if (count('ALPH') !== (hasAlpha ? 1 : 0)) fail('is inconsistent: unexpected alpha plane chunks (ALPH)');
  if (count('HEAD') !== 1 || count('ICCP') > 1 || (count('ICCP') === 1 && view.find('ICCP', 0) < 0))
    fail('is inconsistent: a header or ICC profile chunk is repeated or misnumbered');
  if (typeof header.metadata !== 'object' || header.metadata === null)
    fail('is damaged: its header has no metadata record');
  if (header.metadata.icc === true && count('ICCP') === 0)
    fail('is truncated or damaged: its header records an ICC profile, but the ICCP chunk is missing');
  if (typeof header.sourceSha256 !== 'string' || !/^[0-9a-f]{64}$/.test(header.sourceSha256))
    fail('has no valid source SHA-256');
  if (
    header.alphaSha256 !== undefined &&
    !(typeof header.alphaSha256 === 'string' && /^[0-9a-f]{64}$/.test(header.alphaSha256))
  )
    fail('has an invalid alpha SHA-256');
  return { view, header };
}

/** The planes of a lossy (base and residual layer) file against its chunks: one PLNE per plane, RSDL as declared. */
function checkLayeredPlanes(view: ContainerView, header: RkfHeader, fail: (problem: string) => never): void {
  const { width, height } = header;
  const colour = header.channels >= 3;
  const wantPlanes = colour ? 3 : 1;
  if (colour && header.colourTransform !== 'ycbcr-jfif')
    fail(`declares colour transform "${String(header.colourTransform)}" for a colour image`);
  if (!colour && header.colourTransform !== 'none')
    fail(`declares colour transform "${String(header.colourTransform)}" for a gray image`);
  if (!Array.isArray(header.planes) || header.planes.length !== wantPlanes)
    fail(
      `is inconsistent: ${header.channels} channels need ${wantPlanes} coded plane(s), the header lists ${Array.isArray(header.planes) ? header.planes.length : 'none'}`,
    );
  header.planes.forEach((p, k) => {
    if (!(p.tile === 0 || int(p.tile, 16, 512)))
      fail(`plane ${k} has tile size ${String(p.tile)}; valid sizes are 0 (whole plane) and 16–512`);
    if (!(typeof p.step === 'number' && Number.isFinite(p.step) && p.step > 0))
      fail(`plane ${k} has an invalid quantiser step ${String(p.step)}`);
    if (!(typeof p.meanStep === 'number' && Number.isFinite(p.meanStep) && p.meanStep >= 0))
      fail(`plane ${k} has an invalid mean step`);
    if (typeof p.entropy !== 'string') fail(`plane ${k} names no entropy coder`);
    if (view.find('PLNE', k) < 0)
      fail(`is truncated or damaged: the data of plane ${k} (PLNE #${k}) is missing`);
    if (p.residualStep !== undefined) {
      if (!(typeof p.residualStep === 'number' && Number.isFinite(p.residualStep) && p.residualStep > 0))
        fail(`plane ${k} has an invalid residual step ${String(p.residualStep)}`);
      if (view.find(RESIDUAL, k) < 0)
        fail(`is truncated or damaged: the residual of plane ${k} (${RESIDUAL} #${k}) is missing`);
    }
  });
  const residuals = header.planes.filter((p) => p.residualStep !== undefined).length;
  if (residuals > 0 && width * height > RESIDUAL_MAX_PIXELS)
    fail(
      `declares a residual layer on ${width}×${height} = ${width * height} pixels, over the ${RESIDUAL_MAX_PIXELS} pixels a residual layer may cover`,
    );
  if (
    view.entries.some(
      (e) => e.type === RESIDUAL && (e.id >= wantPlanes || header.planes[e.id]?.residualStep === undefined),
    ) ||
    view.entries.filter((e) => e.type === RESIDUAL).length !== residuals
  )
    fail(`is inconsistent: unexpected residual chunks (${RESIDUAL})`);
  const count = (type: string) => view.entries.filter((e) => e.type === type).length;
  if (count('PLNE') !== wantPlanes || count(EXACT_CHUNK) > 0)
    fail('is inconsistent: unexpected extra plane chunks');
}

/** The quantised factors of coded plane k (its PLNE chunk), as the header describes them. */
export function readBasePlane(
  view: ContainerView,
  header: RkfHeader,
  k: number,
  compressors?: ByteCompressor[],
): QuantPlane {
  const { width, height } = header;
  const ph = header.planes[k];
  return decodePlane(
    view.payload(view.find('PLNE', k)),
    { width, height, tile: ph.tile, step: ph.step, meanStep: ph.meanStep },
    ph.entropy,
    compressors,
  );
}

/** Each coded plane's residual layer, decoded whole (float64), or undefined for a plane without one. */
export function decodeResiduals(
  view: ContainerView,
  header: RkfHeader,
  file: string,
): Array<Float64Array | undefined> {
  const { width, height } = header;
  return header.planes.map((ph, k) => {
    if (ph.residualStep === undefined) return undefined;
    try {
      const coder = view.version.minor >= VERSION_MINOR_CODER2 ? 2 : 1;
      return decodeWaveletPlane(view.payload(view.find(RESIDUAL, k)), width, height, ph.residualStep, coder);
    } catch (err) {
      if (err instanceof FormatError) throw err;
      throw new FormatError(
        file,
        `the residual of plane ${k} (${ph.name}) cannot be decoded: ${(err as Error).message}`,
      );
    }
  });
}

/**
 * The two layers of each coded plane in float64, before the colour transform and rounding: `base` (the
 * low-rank image) and `residual` (undefined for a plane without one). The decoder's samples are
 * round/clamp(colour(base + residual)), with the sum formed exactly as here.
 * @throws FormatError
 */
export function decodeImageLayers(
  bytes: Uint8Array,
  file: string,
  opts: ReadOptions = {},
): { header: RkfHeader; base: Float64Array[]; residual: Array<Float64Array | undefined> } {
  const { view, header } = readImageHeader(bytes, file, opts);
  const { width, height } = header;
  const base = header.planes.map((ph, k) => {
    try {
      const q = readBasePlane(view, header, k, opts.compressors);
      const out = new Float64Array(width * height);
      reconstructRows(q, tileGrid(width, height, q.tile), 0, height, out);
      return out;
    } catch (err) {
      if (err instanceof FormatError) throw err;
      throw new FormatError(file, `plane ${k} (${ph.name}) cannot be decoded: ${(err as Error).message}`);
    }
  });
  return { header, base, residual: decodeResiduals(view, header, file) };
}
