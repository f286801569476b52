/**
 * Lossless image files (container 1.5, docs/format.md "Lossless files"): the image layout's header with
 * `coding: "exact"`, one EXCT chunk per coded plane (grey, or Y, U, V of the reversible colour transform,
 * ./lossless-image) and, as in every image file, an ALPH chunk for alpha and an ICCP chunk for the profile.
 * There are no PLNE or RSDL chunks. This module validates such a header against its chunks and decodes the
 * planes into samples; ./image-file calls it.
 */
import { FormatError } from '../../contract/errors';
import type { ContainerView } from './container';
import { VERSION_MINOR_LOSSLESS } from './container';
import type { RkfHeader } from './image-file';
import {
  decodeExactPlanes,
  EXACT_COLOUR_NAMES,
  EXACT_GREY_NAMES,
  exactShapes,
  REVERSIBLE_TRANSFORM,
  sourceFromExact,
} from './lossless-image';

/** Chunk type of a coded plane of a lossless file (critical: a reader that does not know it must refuse). */
export const EXACT_CHUNK = 'EXCT';
/** Header value of `coding` in a lossless file. */
export const EXACT_CODING = 'exact';

/** Whether a (validated) header is that of a lossless file. */
export function isExactFile(header: RkfHeader): boolean {
  return header.coding === EXACT_CODING;
}

/**
 * Check a lossless file's header against its chunks: the colour transform, the plane names, one EXCT chunk
 * per plane and none of the lossy layers' chunks. `fail` throws the reader's FormatError.
 */
export function checkExactHeader(view: ContainerView, header: RkfHeader, fail: (p: string) => never): void {
  if (view.version.minor < VERSION_MINOR_LOSSLESS)
    fail(`declares lossless coding, which container version 1.${view.version.minor} cannot hold`);
  const colour = header.channels >= 3;
  const transform = colour ? REVERSIBLE_TRANSFORM : 'none';
  if (header.colourTransform !== transform)
    fail(
      `declares colour transform "${String(header.colourTransform)}" for a lossless ${colour ? 'colour' : 'gray'} image ("${transform}" expected)`,
    );
  if (header.lossless !== true)
    fail('is inconsistent: its coding is lossless but its lossless flag is not set');
  const names = colour ? EXACT_COLOUR_NAMES : EXACT_GREY_NAMES;
  if (
    !Array.isArray(header.planes) ||
    header.planes.length !== names.length ||
    header.planes.some((p, k) => typeof p !== 'object' || p === null || p.name !== names[k])
  )
    fail(
      `is inconsistent: a lossless ${colour ? 'colour' : 'gray'} image lists the planes ${names.join(', ')}`,
    );
  const count = (type: string) => view.entries.filter((e) => e.type === type).length;
  names.forEach((name, k) => {
    if (view.find(EXACT_CHUNK, k) < 0)
      fail(`is truncated or damaged: the data of plane ${k} (${name}, ${EXACT_CHUNK} #${k}) is missing`);
  });
  if (count(EXACT_CHUNK) !== names.length || count('PLNE') > 0 || count('RSDL') > 0)
    fail(`is inconsistent: unexpected plane chunks in a lossless file`);
}

/** The colour (or grey) samples of a lossless file into `out` (one array per channel, alpha aside). */
export function decodeExactSamples(
  view: ContainerView,
  header: RkfHeader,
  file: string,
  out: { [i: number]: number }[],
): void {
  const { width, height, bitDepth } = header;
  const colour = header.channels >= 3;
  const shapes = exactShapes(width, height, bitDepth, colour);
  try {
    const chunks = shapes.map((_, k) => view.payload(view.find(EXACT_CHUNK, k)));
    sourceFromExact(decodeExactPlanes(chunks, shapes), bitDepth, out, width * height);
  } catch (err) {
    if (err instanceof FormatError) throw err;
    throw new FormatError(file, `its lossless planes cannot be decoded: ${(err as Error).message}`);
  }
}
