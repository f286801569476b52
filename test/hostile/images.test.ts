/**
 * Fault campaign on the image reader: generated hostile inputs, each its own test, run in-process through
 * probeImage/decodeImage. Every input must give either a decoded image or an InputError whose message is
 * one sentence naming the file as given (see `displayName`), in a user's words, under 320 characters,
 * with no decoder internals. Files are made in a temporary folder from in-memory builders
 * (test/io/hostile-fixtures.ts) and from the committed fixtures in test/fixtures/images.
 *
 * Library versions the expectations were checked against: sharp 0.35.5 with libvips 8.18.7, libpng
 * 1.6.58, libtiff 4.7.2, mozjpeg 0826579, libwebp 1.6.0 (`sharp.versions`, package-lock.json).
 */
import { spawnSync } from 'node:child_process';
import { chmodSync, mkdirSync, mkdtempSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { deflateSync as zlibDeflate } from 'node:zlib';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { checkString, displayName, InputError } from '../../src-main/contract';
import { DEFAULT_PIXEL_LIMIT, decodeImage, probeImage } from '../../src-main/node/image/decode';
import { describeFileError } from '../../src-main/node/image/open-file';
import { image, repoRoot } from '../helpers/fixtures';
import { spawnWithModeBits } from '../helpers/permissions';
import {
  buildPng,
  buildTiff,
  greyIccProfile,
  PNG_SIGNATURE,
  physChunk,
  pngChunk,
  replacePngChunk,
  type TiffSpec,
} from '../io/hostile-fixtures';

let dir: string;
let seq = 0;
const bases: Record<'png' | 'tiff' | 'jpeg' | 'webp' | 'png16' | 'tiffGrey', Buffer> = {} as never;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'rankfold-hostile-'));
  const w = 48;
  const h = 32;
  const rgb = Buffer.from(Uint8Array.from({ length: w * h * 3 }, (_, i) => (i * 7 + (i >> 5)) & 0xff));
  const src = () => sharp(rgb, { raw: { width: w, height: h, channels: 3 } });
  bases.png = await src().png().toBuffer();
  bases.tiff = await src().tiff({ compression: 'lzw' }).toBuffer();
  bases.jpeg = await src().jpeg({ quality: 90 }).toBuffer();
  bases.webp = await src().webp({ quality: 80 }).toBuffer();
  bases.png16 = await src().toColourspace('rgb16').png().toBuffer();
  bases.tiffGrey = readFileSync(image('chessboard_GRAY_U16.tif'));
});
afterAll(() => {
  chmodSyncSafe(dir);
  rmSync(dir, { recursive: true, force: true });
});

function chmodSyncSafe(d: string) {
  try {
    chmodSync(d, 0o755);
  } catch {
    /* already gone */
  }
}

/** Write bytes to a fresh file in the campaign folder and return the path as a user would give it. */
function put(bytes: Uint8Array, ext: string): string {
  const f = join(dir, `case-${++seq}.${ext}`);
  writeFileSync(f, bytes);
  return f;
}

type Expect = 'ok' | 'error' | 'either';
interface Case {
  name: string;
  make: () => string | Promise<string>;
  expect: Expect;
  /** probe only (header), for inputs whose decode would be slow by design. */
  probeOnly?: boolean;
  /** The message must contain this (user words for the problem). */
  says?: RegExp;
  /** Warnings the decode must give (regex each). */
  warns?: RegExp[];
  pixelLimit?: number;
}

/** Text that names decoder or library internals, never the user's problem (common practice). */
const INTERNALS: RegExp[] = [
  /vips/i,
  /Expected one of/,
  /\bsharp\b(?! limitInputPixels)/, // the pixel-limit sentence names sharp's documented default, on purpose
  /libpng|libtiff|libjpeg|libwebp|TIFFRead|tiff2vips|jpeg2vips|webp2vips/i,
  /premature end/i,
  /Input (file|buffer)/,
  /\b(ENOENT|EACCES|EPERM|ELOOP|ENAMETOOLONG|ENOTDIR|EISDIR|EIO)\b/,
  /Unknown error|undefined|NaN|\[object/,
  /corrupt header/i,
];

function checkMessage(err: unknown, file: string, c: Case) {
  expect(err).toBeInstanceOf(InputError);
  const msg = (err as Error).message;
  const shown = displayName(file);
  expect(msg.startsWith(`${shown}: `), msg).toBe(true);
  expect(msg).not.toMatch(/[\n\r]/);
  const problem = msg.slice(shown.length + 2);
  // One sentence: no full stop followed by a new sentence inside the problem text.
  expect(problem, msg).not.toMatch(/[.!?]\s+[A-Z]/);
  expect(msg.length, msg).toBeLessThan(320);
  for (const bad of INTERNALS) expect(msg, `${msg} matches ${bad}`).not.toMatch(bad);
  if (c.says) expect(msg).toMatch(c.says);
}

async function runCase(c: Case) {
  const file = await c.make();
  const opts = c.pixelLimit ? { pixelLimit: c.pixelLimit } : {};
  let result: Awaited<ReturnType<typeof decodeImage>> | Awaited<ReturnType<typeof probeImage>> | undefined;
  let error: unknown;
  try {
    result = c.probeOnly ? await probeImage(file, opts) : await decodeImage(file, opts);
  } catch (err) {
    error = err;
  }
  if (process.env.RANKFOLD_SHOW_MESSAGES)
    console.log(
      `${c.name} → ${error ? (error as Error).message : `ok ${JSON.stringify((result as { warnings?: string[] })?.warnings ?? [])}`}`,
    );
  if (error !== undefined) {
    if (c.expect === 'ok') throw error;
    checkMessage(error, file, c);
    return;
  }
  expect(c.expect, `decoded although an error was expected: ${c.name}`).not.toBe('error');
  if (result && 'planes' in result) {
    expect([1, 2, 3, 4]).toContain(result.channels);
    expect(result.planes).toHaveLength(result.channels);
    const n = result.width * result.height;
    const max = result.bitDepth === 16 ? 65535 : 255;
    for (const p of result.planes) {
      expect(p.length).toBe(n);
      for (let i = 0; i < n; i += Math.max(1, n >> 6)) expect(p[i] >= 0 && p[i] <= max).toBe(true);
    }
  }
  const warnings = (result && 'warnings' in result ? result.warnings : undefined) ?? [];
  for (const re of c.warns ?? [])
    expect(
      warnings.some((w) => re.test(w)),
      JSON.stringify(warnings),
    ).toBe(true);
  for (const w of warnings) {
    expect(w.startsWith(`${displayName(file)}: `)).toBe(true);
    expect(w).not.toMatch(/[\n\r]/);
    for (const bad of INTERNALS) expect(w).not.toMatch(bad);
  }
}

const cases: Case[] = [];

// ── 1. Truncations at many offsets (fixed byte offsets and fractions of the file) ──────────────────────
const OFFSETS: Array<number | string> = [
  1, 2, 3, 4, 7, 8, 12, 16, 20, 24, 29, 33, 41, 57, 64, 100, 150, 200, 300,
];
const FRACTIONS = [0.25, 0.5, 0.75, 0.9];
for (const fmt of ['png', 'tiff', 'jpeg', 'webp', 'png16', 'tiffGrey'] as const) {
  const ext = fmt.startsWith('png')
    ? 'png'
    : fmt.startsWith('tiff')
      ? 'tif'
      : fmt === 'jpeg'
        ? 'jpg'
        : 'webp';
  const cuts = fmt === 'png16' || fmt === 'tiffGrey' ? [...FRACTIONS, 8, 33] : [...OFFSETS, ...FRACTIONS];
  for (const cut of cuts)
    cases.push({
      name: `${fmt} truncated to ${typeof cut === 'number' && cut < 1 ? `${cut * 100}%` : `${cut} bytes`}`,
      make: () => {
        const b = bases[fmt];
        const at =
          typeof cut === 'number' && cut < 1
            ? Math.floor(b.length * cut)
            : Math.min(Number(cut), b.length - 1);
        return put(b.subarray(0, at), ext);
      },
      // A cut in the last bytes of a JPEG (after the scan data) may still decode; everything else must fail.
      expect: 'error',
    });
}
// The tail of each file: the last 1 and 4 bytes cut. Decoders may accept a missing end marker.
for (const fmt of ['png', 'tiff', 'jpeg', 'webp'] as const)
  for (const back of [1, 4])
    cases.push({
      name: `${fmt} with its last ${back} byte(s) cut`,
      make: () => put(bases[fmt].subarray(0, bases[fmt].length - back), fmt === 'tiff' ? 'tif' : fmt),
      expect: 'either',
    });
// A committed fixture, truncated (test/fixtures/images/camera.png).
for (const frac of [0.1, 0.5, 0.95])
  cases.push({
    name: `camera.png truncated to ${frac * 100}%`,
    make: () => {
      const b = readFileSync(image('camera.png'));
      return put(b.subarray(0, Math.floor(b.length * frac)), 'png');
    },
    expect: 'error',
    says: /starts as a PNG file but the rest is truncated or corrupt/,
  });

// ── 2. Byte corruption inside chunks, tags and segments ─────────────────────────────────────────────────
const flip = (b: Buffer, at: number, value?: number) => {
  const c = Buffer.from(b);
  const i = at < 0 ? c.length + at : at;
  c[i] = value ?? c[i] ^ 0xff;
  return c;
};
for (const at of [8, 12, 16, 20, 29, 37, 41, 45, 60, 90, -20, -10])
  cases.push({
    name: `png with byte ${at} inverted (chunk length, type, IHDR, CRC or data)`,
    make: () => put(flip(bases.png, at), 'png'),
    expect: 'either',
  });
for (const at of [0, 2, 4, 5, 8, 9, 10, 20, 30, 50, 100, -30])
  cases.push({
    name: `tiff with byte ${at} inverted (header, IFD entry or strip)`,
    make: () => put(flip(bases.tiff, at), 'tif'),
    expect: 'either',
  });
for (const at of [2, 3, 4, 6, 20, 100, 160, 200, 300, -2])
  cases.push({
    name: `jpeg with byte ${at} inverted (segment marker, length or scan)`,
    make: () => put(flip(bases.jpeg, at), 'jpg'),
    expect: 'either',
  });
for (const at of [4, 8, 12, 15, 16, 20, 30, 40])
  cases.push({
    name: `webp with byte ${at} inverted (RIFF size, fourcc, chunk size or bitstream)`,
    make: () => put(flip(bases.webp, at), 'webp'),
    expect: 'either',
  });

// ── 3. Bogus IHDR fields and decompression bombs (W3C PNG 3rd ed. §11.2.1 IHDR) ────────────────────────
const ihdrCases: Array<[string, Parameters<typeof buildPng>[0], Expect, RegExp?]> = [
  ['width 0', { width: 0, height: 8, bitDepth: 8, colourType: 0 }, 'error'],
  ['height 0', { width: 8, height: 0, bitDepth: 8, colourType: 0 }, 'error'],
  [
    'width 2^31 (over the PNG limit of 2^31−1)',
    { width: 2 ** 31, height: 1, bitDepth: 8, colourType: 0 },
    'error',
  ],
  ['bit depth 3 (not allowed)', { width: 8, height: 8, bitDepth: 3, colourType: 0 }, 'error'],
  ['colour type 5 (not defined)', { width: 8, height: 8, bitDepth: 8, colourType: 5 }, 'error'],
  ['RGB at bit depth 4 (not allowed)', { width: 8, height: 8, bitDepth: 4, colourType: 2 }, 'error'],
  ['palette without PLTE', { width: 8, height: 8, bitDepth: 8, colourType: 3 }, 'error'],
  ['valid 8×8 grey (control case)', { width: 8, height: 8, bitDepth: 8, colourType: 0 }, 'ok'],
  ['valid 8×8 grey+alpha 16-bit (control case)', { width: 8, height: 8, bitDepth: 16, colourType: 4 }, 'ok'],
  ['valid 8×8 1-bit grey (control case)', { width: 8, height: 8, bitDepth: 1, colourType: 0 }, 'ok'],
];
for (const [name, spec, exp] of ihdrCases)
  cases.push({ name: `png IHDR: ${name}`, make: () => put(buildPng(spec), 'png'), expect: exp });
// Bombs: a tiny file declaring more pixels than the limit is refused from the header, before decoding.
for (const [w, h] of [
  [100_000, 100_000],
  [20_000, 20_000],
  [65_535, 65_535],
] as const)
  cases.push({
    name: `png bomb declaring ${w}×${h} in one small IDAT`,
    make: () =>
      put(buildPng({ width: w, height: h, bitDepth: 8, colourType: 0, raw: new Uint8Array(1024) }), 'png'),
    expect: 'error',
    says: /over the pixel limit/,
  });
cases.push({
  name: 'png declaring 2147483647×2 (libpng 1.6 refuses widths over its default user limit of 10^6, from memory; named as damage)',
  make: () =>
    put(
      buildPng({ width: 2 ** 31 - 1, height: 2, bitDepth: 8, colourType: 0, raw: new Uint8Array(1024) }),
      'png',
    ),
  expect: 'error',
});
cases.push({
  name: 'png declaring 16000×16000 (under the default limit): the header probe answers without decoding',
  make: () =>
    put(
      buildPng({ width: 16_000, height: 16_000, bitDepth: 8, colourType: 0, raw: new Uint8Array(1024) }),
      'png',
    ),
  probeOnly: true,
  expect: 'ok',
});
cases.push({
  name: 'tiff declaring 70000×70000 in a 200-byte file',
  make: () =>
    put(
      buildTiff({
        width: 70_000,
        height: 70_000,
        bits: 8,
        samplesPerPixel: 1,
        photometric: 1,
        data: new Uint8Array(16),
      }),
      'tif',
    ),
  expect: 'error',
  says: /over the pixel limit/,
});

// ── 4. Out-of-range metadata: dropped with a warning, pixels kept ───────────────────────────────────────
const greyPng = () => buildPng({ width: 8, height: 8, bitDepth: 8, colourType: 0 });
const physCases: Array<[string, number, number, number, Expect, RegExp[]?]> = [
  ['2^32−1 px/m (the campaign case)', 0xffffffff, 0xffffffff, 1, 'ok', [/resolution of .* is outside/]],
  ['2^31−1 px/m', 0x7fffffff, 0x7fffffff, 1, 'ok', [/resolution of .* is outside/]],
  ['40,000,000 px/m (1,016,000 dpi, over 10^6)', 40_000_000, 40_000_000, 1, 'ok', [/resolution/]],
  ['0 px/m', 0, 0, 1, 'ok'],
  ['1 px/m', 1, 1, 1, 'ok'],
  ['unit 0 (aspect ratio only), huge', 0xffffffff, 1, 0, 'ok'],
  ['unit 7 (undefined)', 11811, 11811, 7, 'ok'],
  ['x ≠ y', 11811, 23622, 1, 'ok'],
];
for (const [name, x, y, unit, exp, warns] of physCases)
  cases.push({
    name: `png pHYs ${name} (PNG 3rd ed. §11.3.5.3)`,
    make: () => put(replacePngChunk(greyPng(), 'pHYs', physChunk(x, y, unit)), 'png'),
    expect: exp,
    warns,
  });
/** An eXIf chunk holding only IFD0 Orientation (Exif 2.32 tag 0x0112, big-endian TIFF structure). */
const exifOrientation = (o: number) => {
  const b = Buffer.alloc(26);
  b.write('MM', 0, 'latin1');
  b.writeUInt16BE(42, 2);
  b.writeUInt32BE(8, 4);
  b.writeUInt16BE(1, 8);
  b.writeUInt16BE(0x0112, 10);
  b.writeUInt16BE(3, 12);
  b.writeUInt32BE(1, 14);
  b.writeUInt16BE(o, 18);
  return pngChunk('eXIf', b);
};
for (const o of [0, 9, 255, 65535])
  cases.push({
    name: `png eXIf orientation ${o} (outside 1–8)`,
    make: () => put(replacePngChunk(greyPng(), 'eXIf', exifOrientation(o)), 'png'),
    expect: 'ok',
  });
const iccp = (profile: Buffer, method = 0) =>
  pngChunk(
    'iCCP',
    Buffer.concat([Buffer.from('p\0', 'latin1'), Buffer.from([method]), zlibDeflate(profile)]),
  );
const iccCases: Array<[string, () => Buffer, Expect, RegExp[]?]> = [
  [
    'grey profile on a grey PNG (kept)',
    () => replacePngChunk(greyPng(), 'iCCP', iccp(greyIccProfile())),
    'ok',
  ],
  [
    'RGB-space profile on a grey PNG (kept byte for byte)',
    () => replacePngChunk(greyPng(), 'iCCP', iccp(greyIccProfile('RGB '))),
    'ok',
  ],
  [
    'garbage profile bytes',
    () => replacePngChunk(greyPng(), 'iCCP', iccp(Buffer.alloc(300, 7))),
    'ok',
    [/ICC profile/],
  ],
  [
    'profile of 20 bytes',
    () => replacePngChunk(greyPng(), 'iCCP', iccp(Buffer.alloc(20, 1))),
    'ok',
    [/ICC profile/],
  ],
  [
    'profile whose size field lies',
    () => {
      const p = greyIccProfile();
      p.writeUInt32BE(p.length + 1000, 0);
      return replacePngChunk(greyPng(), 'iCCP', iccp(p));
    },
    'ok',
    [/ICC profile says it is/],
  ],
  [
    'iCCP with damaged zlib data',
    () =>
      replacePngChunk(
        greyPng(),
        'iCCP',
        pngChunk(
          'iCCP',
          Buffer.concat([Buffer.from('p\0\0', 'latin1'), Buffer.from([0x78, 0x9c, 1, 2, 3, 4])]),
        ),
      ),
    'ok',
    [/ICC profile/],
  ],
  [
    'iCCP with no keyword',
    () => replacePngChunk(greyPng(), 'iCCP', pngChunk('iCCP', Buffer.from([0, 0, 1, 2]))),
    'ok',
    [/ICC profile/],
  ],
];
for (const [name, make, exp, warns] of iccCases)
  cases.push({
    name: `png iCCP: ${name} (PNG 3rd ed. §11.3.2.4)`,
    make: () => put(make(), 'png'),
    expect: exp,
    warns,
  });

/** TIFF RATIONAL for XResolution/YResolution (TIFF 6.0 §2 type 5, tags 282/283, unit 296). */
const rational = (num: number, den: number) => {
  const b = Buffer.alloc(8);
  b.writeUInt32LE(num >>> 0, 0);
  b.writeUInt32LE(den >>> 0, 4);
  return new Uint8Array(b);
};
const short = (v: number) => new Uint8Array(Buffer.from([v & 0xff, v >> 8]));
for (const [name, num, den] of [
  ['4294967295/1 dpi', 0xffffffff, 1],
  ['300/0 (zero denominator)', 300, 0],
  ['0/1', 0, 1],
  ['1/4294967295', 1, 0xffffffff],
  ['300/1 (control case)', 300, 1],
] as const)
  cases.push({
    name: `tiff XResolution ${name}`,
    make: () =>
      put(
        buildTiff({
          width: 6,
          height: 4,
          bits: 8,
          samplesPerPixel: 1,
          photometric: 1,
          extraTags: [
            [282, 5, 1, rational(num, den)],
            [283, 5, 1, rational(num, den)],
            [296, 3, 1, short(2)],
          ],
        }),
        'tif',
      ),
    expect: 'ok',
  });
cases.push({
  name: 'tiff Orientation tag 9 (TIFF 6.0 tag 274 allows 1–8)',
  make: () =>
    put(
      buildTiff({
        width: 6,
        height: 4,
        bits: 8,
        samplesPerPixel: 1,
        photometric: 1,
        extraTags: [[274, 3, 1, short(9)]],
      }),
      'tif',
    ),
  expect: 'error',
  says: /invalid orientation tag \(9; TIFF 6\.0 allows 1–8\)/,
});
cases.push({
  name: 'tiff ICC tag (34675) with garbage bytes',
  make: () =>
    put(
      buildTiff({
        width: 6,
        height: 4,
        bits: 8,
        samplesPerPixel: 1,
        photometric: 1,
        extraTags: [[34675, 7, 64, new Uint8Array(64).fill(9)]],
      }),
      'tif',
    ),
  expect: 'ok',
  warns: [/ICC profile is only 64 bytes/],
});

// ── 5. Colour models and sample formats (hand-built TIFF 6.0 files) ────────────────────────────────────
const W = 6;
const H = 4;
const models: Array<[string, Omit<TiffSpec, 'width' | 'height'>, Expect, RegExp?]> = [
  ['CIELab 8-bit (§23)', { bits: 8, samplesPerPixel: 3, photometric: 8 }, 'error', /is a CIELab TIFF/],
  ['CIELab 16-bit (§23)', { bits: 16, samplesPerPixel: 3, photometric: 8 }, 'error', /is a CIELab TIFF/],
  ['ICCLab (photometric 9)', { bits: 8, samplesPerPixel: 3, photometric: 9 }, 'error', /CIELab/],
  ['ITULab (photometric 10)', { bits: 8, samplesPerPixel: 3, photometric: 10 }, 'error', /CIELab/],
  ['CIELab with 1 sample (L* only)', { bits: 8, samplesPerPixel: 1, photometric: 8 }, 'error', /CIELab/],
  ['CMYK 8-bit (converted)', { bits: 8, samplesPerPixel: 4, photometric: 5 }, 'ok'],
  ['CMYK 16-bit (converted)', { bits: 16, samplesPerPixel: 4, photometric: 5 }, 'ok'],
  ['CMYK + alpha (converted)', { bits: 8, samplesPerPixel: 5, photometric: 5, extraSamples: [2] }, 'ok'],
  ['six-ink separation', { bits: 8, samplesPerPixel: 6, photometric: 5 }, 'error', /6 samples per pixel/],
  ['YCbCr uncompressed (converted)', { bits: 8, samplesPerPixel: 3, photometric: 6 }, 'ok'],
  ['multiband, 7 samples', { bits: 8, samplesPerPixel: 7, photometric: 1 }, 'error', /7 samples per pixel/],
  [
    'multiband, 7 samples with ExtraSamples',
    { bits: 8, samplesPerPixel: 7, photometric: 1, extraSamples: [0, 0, 0, 0, 0, 0] },
    'error',
    /7 samples per pixel/,
  ],
  [
    'RGB + 2 extra samples',
    { bits: 8, samplesPerPixel: 5, photometric: 2, extraSamples: [2, 0] },
    'error',
    /5 samples per pixel/,
  ],
  [
    'grey + unspecified extra sample',
    { bits: 8, samplesPerPixel: 2, photometric: 1, extraSamples: [0] },
    'ok',
  ],
  ['grey + alpha', { bits: 8, samplesPerPixel: 2, photometric: 1, extraSamples: [2] }, 'ok'],
  [
    '32-bit float grey',
    { bits: 32, samplesPerPixel: 1, photometric: 1, sampleFormat: 3 },
    'error',
    /sample format "float" \(32-bit floating-point/,
  ],
  [
    '32-bit float RGB',
    { bits: 32, samplesPerPixel: 3, photometric: 2, sampleFormat: 3 },
    'error',
    /floating-point/,
  ],
  [
    '16-bit float grey',
    { bits: 16, samplesPerPixel: 1, photometric: 1, sampleFormat: 3 },
    'error',
    /16-bit floating-point/,
  ],
  [
    '64-bit float grey',
    { bits: 64, samplesPerPixel: 1, photometric: 1, sampleFormat: 3 },
    'error',
    /64-bit floating-point/,
  ],
  ['signed 8-bit', { bits: 8, samplesPerPixel: 1, photometric: 1, sampleFormat: 2 }, 'error', /signed 8-bit/],
  [
    'signed 16-bit',
    { bits: 16, samplesPerPixel: 1, photometric: 1, sampleFormat: 2 },
    'error',
    /signed 16-bit/,
  ],
  ['unsigned 32-bit', { bits: 32, samplesPerPixel: 1, photometric: 1 }, 'error', /unsigned 32-bit/],
  [
    'complex samples (SampleFormat 6)',
    { bits: 64, samplesPerPixel: 1, photometric: 1, sampleFormat: 6 },
    'error',
    /complex/,
  ],
  ['1-bit black-is-zero', { bits: 1, samplesPerPixel: 1, photometric: 1 }, 'ok'],
  ['1-bit white-is-zero', { bits: 1, samplesPerPixel: 1, photometric: 0 }, 'ok'],
  ['2-bit grey', { bits: 2, samplesPerPixel: 1, photometric: 1 }, 'ok'],
  ['4-bit grey', { bits: 4, samplesPerPixel: 1, photometric: 1 }, 'ok'],
  ['12-bit grey', { bits: 12, samplesPerPixel: 1, photometric: 1 }, 'error', /12-bit samples/],
  ['24-bit grey', { bits: 24, samplesPerPixel: 1, photometric: 1 }, 'error', /24-bit samples/],
  ['palette 8-bit', { bits: 8, samplesPerPixel: 1, photometric: 3 }, 'ok'],
  ['palette 4-bit', { bits: 4, samplesPerPixel: 1, photometric: 3 }, 'ok'],
  ['palette 16-bit', { bits: 16, samplesPerPixel: 1, photometric: 3 }, 'ok'],
  ['palette without ColorMap', { bits: 8, samplesPerPixel: 1, photometric: 3, colorMap: [] }, 'either'],
  ['white-is-zero 16-bit', { bits: 16, samplesPerPixel: 1, photometric: 0 }, 'ok'],
  ['RGB 16-bit', { bits: 16, samplesPerPixel: 3, photometric: 2 }, 'ok'],
  ['RGBA 16-bit', { bits: 16, samplesPerPixel: 4, photometric: 2, extraSamples: [2] }, 'ok'],
  ['mixed depths 8,8,16', { bits: 8, samplesPerPixel: 3, photometric: 2 }, 'error', /different bit depths/],
  [
    'transparency mask (photometric 4)',
    { bits: 1, samplesPerPixel: 1, photometric: 4 },
    'error',
    /transparency mask/,
  ],
  [
    'colour filter array (TIFF/EP 32803)',
    { bits: 8, samplesPerPixel: 1, photometric: 32803 },
    'error',
    /colour-filter-array/,
  ],
  ['LogL (32844)', { bits: 8, samplesPerPixel: 1, photometric: 32844 }, 'error', /LogL/],
  [
    'photometric 99 (undefined)',
    { bits: 8, samplesPerPixel: 1, photometric: 99 },
    'error',
    /photometric interpretation 99/,
  ],
];
for (const [name, spec, exp, says] of models)
  cases.push({
    name: `tiff ${name}`,
    make: () => {
      const t = buildTiff({ width: W, height: H, ...spec });
      if (name.startsWith('mixed depths')) {
        // BitsPerSample is out of line (3 SHORTs): make the third 16.
        const ifd = t.readUInt32LE(4);
        const n = t.readUInt16LE(ifd);
        for (let i = 0; i < n; i++)
          if (t.readUInt16LE(ifd + 2 + 12 * i) === 258)
            t.writeUInt16LE(16, t.readUInt32LE(ifd + 2 + 12 * i + 8) + 4);
      }
      return put(t, 'tif');
    },
    expect: exp,
    says,
  });
// Colour models made by sharp itself: CMYK JPEG (converted), GIF and AVIF (other formats, refused by name).
cases.push({
  name: 'CMYK JPEG written by sharp (converted to RGB)',
  make: async () => put(await sharp(bases.png).toColourspace('cmyk').jpeg().toBuffer(), 'jpg'),
  expect: 'ok',
});
cases.push({
  name: 'GIF (another format)',
  make: async () => put(await sharp(bases.png).gif().toBuffer(), 'gif'),
  expect: 'error',
  says: /unsupported format \("gif"\)/,
});
cases.push({
  name: 'PNG named .tif (contents decide, not the name)',
  make: () => put(bases.png, 'tif'),
  expect: 'ok',
});

// ── 6. Not images, empty files, folders, links and names ───────────────────────────────────────────────
cases.push({
  name: 'empty file',
  make: () => put(new Uint8Array(0), 'png'),
  expect: 'error',
  says: /is empty \(0 bytes\)/,
});
cases.push({ name: 'one byte', make: () => put(Uint8Array.of(0x89), 'png'), expect: 'error' });
cases.push({
  name: 'PNG signature only',
  make: () => put(PNG_SIGNATURE, 'png'),
  expect: 'error',
  says: /starts as a PNG file/,
});
cases.push({
  name: 'text file',
  make: () => put(Buffer.from('ledger 14, folio 3\n'), 'png'),
  expect: 'error',
  says: /not an image/,
});
cases.push({
  name: '4 kB of zeros',
  make: () => put(new Uint8Array(4096), 'tif'),
  expect: 'error',
  says: /not an image/,
});
cases.push({
  name: 'random bytes',
  make: () =>
    put(
      Uint8Array.from({ length: 2048 }, (_, i) => (i * 2654435761) >>> 24),
      'jpg',
    ),
  expect: 'error',
});
cases.push({
  name: 'HTML page',
  make: () => put(Buffer.from('<!doctype html><title>x</title>'), 'png'),
  expect: 'error',
});
cases.push({
  name: 'a folder',
  make: () => {
    const f = join(dir, `folder-${++seq}.png`);
    mkdirSync(f);
    return f;
  },
  expect: 'error',
  says: /is a folder, not an image file/,
});
cases.push({
  name: 'missing file',
  make: () => join(dir, 'no-such-scan.png'),
  expect: 'error',
  says: /no such file$/,
});
cases.push({
  name: 'a path through a file (ENOTDIR)',
  make: () => `${put(bases.png, 'png')}/inside.png`,
  expect: 'error',
  says: /a part of its path is a file, not a folder/,
});
cases.push({
  name: 'symbolic link to itself',
  make: () => {
    const f = join(dir, `self-${++seq}.png`);
    symlinkSync(f, f);
    return f;
  },
  expect: 'error',
  says: /loop of symbolic links/,
});
cases.push({
  name: 'two symbolic links pointing at each other',
  make: () => {
    const a = join(dir, `loop-a-${++seq}.png`);
    const b = join(dir, `loop-b-${seq}.png`);
    symlinkSync(b, a);
    symlinkSync(a, b);
    return a;
  },
  expect: 'error',
  says: /loop of symbolic links/,
});
cases.push({
  name: 'dangling symbolic link',
  make: () => {
    const f = join(dir, `dangling-${++seq}.png`);
    symlinkSync(join(dir, 'gone.png'), f);
    return f;
  },
  expect: 'error',
  says: /no such file/,
});
cases.push({
  name: 'symbolic link to /dev/zero (a device)',
  make: () => {
    const f = join(dir, `zero-${++seq}.png`);
    symlinkSync('/dev/zero', f);
    return f;
  },
  expect: 'error',
  says: /is a device, not an image file/,
});
cases.push({
  name: 'a named pipe (FIFO), refused without opening it',
  make: () => {
    const f = join(dir, `pipe-${++seq}.png`);
    const r = spawnSync('mkfifo', [f]);
    if (r.status !== 0) throw new Error('mkfifo is needed for this case');
    return f;
  },
  expect: 'error',
  says: /named pipe/,
});
cases.push({
  name: 'a name component longer than 255 bytes (ENAMETOOLONG)',
  make: () => join(dir, `${'a'.repeat(300)}.png`),
  expect: 'error',
  says: /too long for the file system/,
});
cases.push({
  name: 'a 4,400-character path (shortened in the message, start and end kept)',
  make: () =>
    join(
      dir,
      ...Array.from({ length: 20 }, (_, i) => `${String(i).padStart(2, '0')}-${'d'.repeat(216)}`),
      'scan.png',
    ),
  expect: 'error',
  says: /…\(\d+ characters left out\)…d+\/scan\.png: /,
});
cases.push({
  name: 'an existing file under a 3,000-character path',
  make: () => {
    let p = dir;
    for (let i = 0; i < 12; i++) p = join(p, `${String(i).padStart(2, '0')}-${'f'.repeat(240)}`);
    mkdirSync(p, { recursive: true });
    const f = join(p, 'page.png');
    writeFileSync(f, 'not an image');
    return f;
  },
  expect: 'error',
  says: /characters left out.*page\.png: is not an image/,
});
cases.push({
  name: 'a name that is not valid UTF-8 (as Node decodes it from argv)',
  make: () => {
    const raw = Buffer.concat([
      Buffer.from(`${dir}/scan-`),
      Buffer.from([0xff, 0xfe, 0x41]),
      Buffer.from('.png'),
    ]);
    writeFileSync(raw, bases.png);
    return raw.toString('utf8'); // lossy: U+FFFD replaces the bad bytes, as in process.argv
  },
  expect: 'error',
  says: /not valid UTF-8.*rename the file/,
});
cases.push({
  name: 'a name with a newline in it (escaped in the message)',
  make: () => {
    const f = join(dir, `two\nlines-${++seq}.png`);
    writeFileSync(f, 'not an image');
    return f;
  },
  expect: 'error',
  says: /two\\nlines/,
});
cases.push({
  name: 'a valid PNG under a non-ASCII name (control case)',
  make: () => {
    const f = join(dir, `Flurkarte Nr. 7 – Ölmühle ${++seq}.png`);
    writeFileSync(f, bases.png);
    return f;
  },
  expect: 'ok',
});

describe('hostile images: a decoded image or one clear sentence (sharp 0.35.5, libvips 8.18.7)', () => {
  it(`has at least 150 generated cases (${cases.length})`, () => {
    expect(cases.length).toBeGreaterThanOrEqual(150);
    expect(new Set(cases.map((c) => c.name)).size).toBe(cases.length);
  });
  it.each(cases.map((c) => [c.name, c] as const))('%s', async (_name, c) => {
    await runCase(c);
  });
});

describe('file-system problems are named as such (POSIX.1-2017 <errno.h> codes as Node reports them)', () => {
  const codes: Array<[string, RegExp]> = [
    ['EACCES', /permission denied when reading/],
    ['EPERM', /permission denied when reading/],
    ['ELOOP', /loop of symbolic links/],
    ['ENAMETOOLONG', /too long for the file system/],
    ['ENOTDIR', /a part of its path is a file, not a folder/],
    ['EISDIR', /is a folder/],
    ['EIO', /input\/output error/],
    ['EMFILE', /too many files are open/],
    ['ENXIO', /device behind it is not available/],
    ['ESTALE', /network share/],
    ['EWHATEVER', /cannot be read \(the system reported error EWHATEVER\)/],
  ];
  it.each(codes)('%s (injected)', (code, says) => {
    const err = Object.assign(new Error(`${code}: raw text`), { code });
    const e = describeFileError('scans/page 3.tif', err);
    expect(e).toBeInstanceOf(InputError);
    expect(e.message.startsWith('scans/page 3.tif: ')).toBe(true);
    expect(e.message).toMatch(says);
    expect(e.message).not.toContain('raw text');
  });

  it('a real unreadable file (mode 000) is named as a permission problem, not as "not an image"', () => {
    const sub = mkdtempSync(join(dir, 'perm-'));
    const f = join(sub, 'locked.png');
    writeFileSync(f, bases.png);
    chmodSync(f, 0o000);
    // Needs the built CLI (dist/cli.js; `npm test` builds first). Run so that mode bits bind even as root.
    const r = spawnWithModeBits(process.execPath, [join(repoRoot, 'dist', 'cli.js'), 'inspect', f]);
    expect(r.status).toBe(1);
    expect(r.stderr.trim()).toBe(
      `rankfold inspect: ${f}: permission denied when reading; check that you may read the file and open every folder above it`,
    );
  });

  it('a 4,300-character path given where at most 4096 are accepted is not echoed whole (the campaign saw 4,355 bytes)', () => {
    const long = `/scans/${'x'.repeat(4300)}.png`;
    expect(() => checkString('file', long)).toThrow(/characters left out\)…x+\.png" of type string$/);
    let msg = '';
    try {
      checkString('file', long);
    } catch (err) {
      msg = (err as Error).message;
    }
    expect(msg.length).toBeLessThan(320);
  });

  it('the default pixel limit is sharp’s 2^28 − 1 default for limitInputPixels (16383 × 16383)', () => {
    expect(DEFAULT_PIXEL_LIMIT).toBe(16383 * 16383);
  });
});
