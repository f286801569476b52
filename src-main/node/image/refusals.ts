/**
 * What Rankfold does not read, refused by name (TIFF colour models and sample formats, libvips colour spaces
 * and depths), the depth and colour a readable header decodes to, and libvips failures turned into one sentence
 * naming the file. No decoder text reaches a message.
 */
import type { Metadata } from 'sharp';
import { hinted, InputError } from '../../contract';
import type { TiffFacts } from './tiff-tags';

/** The formats Rankfold reads, for messages. */
export const FORMAT_NAMES = 'PNG, TIFF, JPEG and WebP';

/** TIFF PhotometricInterpretation values Rankfold does not read, by name (TIFF 6.0 §§3–23; TIFF/EP; DNG 1.6). */
const PHOTOMETRIC_NAMES: Record<number, string> = {
  4: 'a transparency mask',
  8: 'a CIELab TIFF',
  9: 'an ICC-Lab TIFF (CIELab)',
  10: 'an ITU-Lab TIFF (CIELab)',
  32803: 'a colour-filter-array (raw sensor) TIFF',
  32844: 'a LogL TIFF',
  32845: 'a LogLuv TIFF',
  34892: 'a linear-raw TIFF',
  51177: 'a depth-map TIFF',
};

/**
 * The refusal kind of a file that is not an image Rankfold reads at all (a text file, a GIF), as opposed to a
 * scan it cannot read (damaged, an unsupported colour model): `details.refusal`. A batch lists such files as
 * skipped, not failed.
 */
export const NOT_AN_IMAGE = { refusal: 'not-an-image' } as const;

/** True for an error (or its payload) refused as {@link NOT_AN_IMAGE}. */
export function isNotAnImage(err: { details?: Record<string, unknown> } | undefined): boolean {
  return err?.details?.refusal === NOT_AN_IMAGE.refusal;
}

const READS = 'Rankfold reads grey, grey+alpha, RGB, RGBA, palette, YCbCr and CMYK scans';

/** Refuse, by name, what the TIFF tags say Rankfold cannot read. */
export function refuseTiffModel(file: string, f: TiffFacts): void {
  const pi = f.photometric;
  if (pi !== undefined && PHOTOMETRIC_NAMES[pi])
    throw new InputError(
      file,
      `is ${PHOTOMETRIC_NAMES[pi]}; ${READS}, so convert it (for example to RGB) first`,
      { photometric: pi },
    );
  if (pi !== undefined && ![0, 1, 2, 3, 5, 6].includes(pi))
    throw new InputError(
      file,
      `uses a colour model Rankfold does not know (TIFF photometric interpretation ${pi}); ${READS}`,
      { photometric: pi },
    );
  const format = f.sampleFormat[0] ?? 1;
  const bits = f.bitsPerSample[0] ?? 1;
  if (format === 3 || format === 2 || format >= 5 || (format === 1 && bits === 32)) {
    const name = sampleFormatName(format, bits);
    throw new InputError(file, `has an unsupported sample format "${name.id}" (${name.words}); ${SAMPLES}`, {
      depth: name.id,
    });
  }
  if (f.bitsPerSample.some((b) => b !== bits))
    throw new InputError(
      file,
      `has samples of different bit depths (${f.bitsPerSample.join(', ')}); Rankfold reads images whose samples all have the same depth`,
    );
  if (![1, 2, 4, 8, 16].includes(bits))
    throw new InputError(file, `has ${bits}-bit samples; Rankfold reads 1-, 2-, 4-, 8- and 16-bit samples`, {
      bits,
    });
  // libtiff 4.7.2 (observed here) treats an Orientation outside 1–8 as an error while reading pixels, so it cannot be
  // dropped with a warning as for PNG and JPEG: it is named instead of being called damage.
  if (f.orientation !== undefined && !(f.orientation >= 1 && f.orientation <= 8))
    throw new InputError(
      file,
      `has an invalid orientation tag (${f.orientation}; TIFF 6.0 allows 1–8) that the TIFF reader refuses, so remove or correct the tag and try again`,
      { orientation: f.orientation },
    );
  const spp = f.samplesPerPixel;
  const most = pi === 5 ? 5 : pi === 2 || pi === 6 ? 4 : 2;
  if (spp > most)
    throw new InputError(file, `has ${spp} samples per pixel (a multiband image); ${READS}`, {
      samplesPerPixel: spp,
    });
}

const SAMPLES = 'Rankfold reads unsigned 8- and 16-bit integer samples';

function sampleFormatName(format: number, bits: number): { id: string; words: string } {
  if (format === 3)
    return bits === 64
      ? { id: 'double', words: '64-bit floating-point samples' }
      : { id: 'float', words: `${bits}-bit floating-point samples` };
  if (format === 2)
    return {
      id: bits <= 8 ? 'char' : bits <= 16 ? 'short' : 'int',
      words: `signed ${bits}-bit integer samples`,
    };
  if (format >= 5) return { id: 'complex', words: 'complex-number samples' };
  return { id: 'uint', words: `unsigned ${bits}-bit integer samples` };
}

/** Whether a scan with this header decodes to colour planes (RGB, or CMYK converted to sRGB). */
export function isColourScan(meta: Metadata): boolean {
  const space = meta.space;
  return (
    space === 'cmyk' ||
    space === 'srgb' ||
    space === 'rgb16' ||
    (meta.channels ?? 1) - (meta.hasAlpha ? 1 : 0) >= 3
  );
}

/** Refuse, by name, colour models libvips reports that Rankfold does not read (any format). */
export function refuseColourModel(file: string, meta: Metadata): void {
  const channels = meta.channels ?? 1;
  if (meta.space === 'multiband' || meta.space === 'labs' || meta.space === 'lab' || meta.space === 'labq')
    throw new InputError(
      file,
      meta.space === 'multiband'
        ? `has ${channels} band(s) in a colour model Rankfold does not know; ${READS}`
        : `is a CIELab image; ${READS}, so convert it (for example to RGB) first`,
      { space: meta.space },
    );
  if (channels > (meta.space === 'cmyk' ? 5 : 4))
    throw new InputError(file, `has ${channels} samples per pixel (a multiband image); ${READS}`, {
      channels,
    });
}

const DEPTH_WORDS: Record<string, string> = {
  char: 'signed 8-bit integer samples',
  short: 'signed 16-bit integer samples',
  uint: 'unsigned 32-bit integer samples',
  int: 'signed 32-bit integer samples',
  float: 'floating-point samples',
  double: '64-bit floating-point samples',
  complex: 'complex-number samples',
  dpcomplex: 'complex-number samples',
};

export function depthBits(file: string, meta: Metadata): 8 | 16 {
  const depth = meta.depth;
  if (depth === 'uchar') return 8;
  if (depth === 'ushort') return 16;
  const words =
    depth === 'float' && meta.bitsPerSample
      ? `${meta.bitsPerSample}-bit floating-point samples`
      : DEPTH_WORDS[depth ?? ''];
  throw new InputError(
    file,
    `has an unsupported sample format "${depth ?? 'unknown'}"${words ? ` (${words})` : ''}; ${SAMPLES}`,
    { depth },
  );
}

/**
 * Turn a libvips/sharp failure into a sentence naming the file and the problem. libvips keeps one error
 * buffer per process, so while another batch job fails at the same moment its text can be empty
 * ("Unknown error") or another file's; a file whose signature names a format we read therefore gets a
 * message built from that signature alone, the same with 1 job or many. Decoder text never reaches the
 * message: it names library internals, not the user's problem.
 */
export function describeSharpError(
  file: string,
  err: unknown,
  stage: 'read' | 'decode',
  signature: string | undefined,
): InputError {
  const raw = err instanceof Error ? err.message : String(err);
  // sharp's own checks (its C++ pipeline, not the shared libvips buffer), so the text is reliable.
  if (/exceeds pixel limit/i.test(raw))
    return new InputError(
      file,
      'is over the pixel limit; raise it with --pixel-limit',
      hinted('pixel-limit', '; raise it with --pixel-limit'),
    );
  if (/exceeds channel limit/i.test(raw))
    return new InputError(
      file,
      `has more samples per pixel than Rankfold reads (a multiband image); ${READS}`,
    );
  if (signature)
    return new InputError(
      file,
      `cannot be ${stage === 'read' ? 'read' : 'decoded'}: it starts as a ${signature} file but the rest is truncated or corrupt`,
    );
  if (/unsupported image format/i.test(raw))
    return new InputError(
      file,
      `is not an image Rankfold can read (unrecognised contents); Rankfold reads ${FORMAT_NAMES}`,
      NOT_AN_IMAGE,
    );
  return new InputError(
    file,
    `is not an image Rankfold can read (its contents could not be decoded); Rankfold reads ${FORMAT_NAMES}`,
  );
}
