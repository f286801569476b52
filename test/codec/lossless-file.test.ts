// Lossless image files (container 1.5, engine/codec/lossless-file) through the scan encoder: exact round trips
// for every channel layout, the lossless choice under byte budgets and quality floors, and the reader's
// refusal of damaged or inconsistent lossless files.
import { describe, expect, it } from 'vitest';
import { checkCompressOptions, type DecodedImage, FormatError } from '../../src-main/contract';
import { encodeCompactHeader } from '../../src-main/engine/codec/compact-header';
import { writeContainer } from '../../src-main/engine/codec/container';
import { readImageHeader } from '../../src-main/engine/codec/image-file';
import { decodeImageFile } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import type { EncodeOptions } from '../../src-main/engine/lowrank/encode-options';
import { hashSamples } from '../../src-main/node/image/decode';
import { lcg } from '../helpers/lcg';

/** A scan in memory: flat discs on a flat ground (piecewise constant), or uniform noise. */
function scan(
  w: number,
  h: number,
  channels: 1 | 2 | 3 | 4,
  depth: 8 | 16,
  kind: 'flat' | 'noise',
): DecodedImage {
  const max = 2 ** depth - 1;
  const r = lcg(channels * 31 + depth);
  const planes = Array.from({ length: channels }, (_, c) =>
    Float32Array.from({ length: w * h }, (_, i) => {
      if (kind === 'noise') return Math.floor(r() * (max + 1));
      const x = i % w;
      const y = Math.floor(i / w);
      const inDisc = (x - w / 2) ** 2 + (y - h / 2) ** 2 < (Math.min(w, h) / 3) ** 2;
      return inDisc ? Math.round(max * (0.7 - 0.1 * c)) : x < w / 4 ? max : Math.round(max * 0.2);
    }),
  );
  return {
    file: `${kind}-${channels}x${depth}.png`,
    width: w,
    height: h,
    channels,
    bitDepth: depth,
    colour: channels >= 3 ? 'rgb' : 'gray',
    hasAlpha: channels === 2 || channels === 4,
    planes,
    meta: { format: 'png' },
    inputBytes: 0,
    rawBytes: (w * h * channels * depth) / 8,
    sourceSha256: hashSamples(planes, depth),
  } as DecodedImage;
}

const options = (budget: EncodeOptions['budget'], exact?: EncodeOptions['exact']): EncodeOptions => ({
  budget,
  tile: 'auto',
  layers: 'auto',
  exact,
});

describe('lossless files', () => {
  it.each([
    [1, 8],
    [2, 8],
    [3, 8],
    [4, 16],
    [1, 16],
    [3, 16],
  ] as const)('%i channel(s), %i-bit: --lossless decodes to the source samples', (channels, depth) => {
    const img = scan(45, 33, channels, depth, 'flat');
    const r = encodeScan(img, options({ kind: 'bpp', bpp: 1 }, 'always'));
    expect(r.lossless).toBe(true);
    expect(r.header.coding).toBe('exact');
    expect(r.layers.chosen).toBe('lossless');
    // Container 1.5 (preamble bytes 10–11).
    expect((r.bytes[10] << 8) | r.bytes[11]).toBe(5);
    const d = decodeImageFile(r.bytes, 'x.rkf');
    expect(d.samples.map((s) => Array.from(s))).toEqual(img.planes.map((p) => Array.from(p)));
  });

  it('writes 1×1, 1×N and N×1 scans and random noise exactly', () => {
    for (const [w, h, kind] of [
      [1, 1, 'flat'],
      [1, 29, 'noise'],
      [29, 1, 'noise'],
      [40, 40, 'noise'],
    ] as const) {
      const img = scan(w, h, 1, 8, kind);
      const d = decodeImageFile(encodeScan(img, options({ kind: 'bytes', bytes: 1e6 }, 'always')).bytes, 'x');
      expect(Array.from(d.samples[0])).toEqual(Array.from(img.planes[0]));
    }
  });

  it('is chosen under a byte budget it fits, and not for noise it cannot fit', () => {
    const flat = scan(160, 120, 1, 8, 'flat');
    const budget = Math.floor((0.1 * 160 * 120) / 8);
    const r = encodeScan(flat, options({ kind: 'bpp', bpp: 0.1 }, 'auto'));
    expect(r.lossless).toBe(true);
    expect(r.bytes.length).toBeLessThanOrEqual(budget);
    // Without the choice the same budget gives a lossy file.
    expect(encodeScan(flat, options({ kind: 'bpp', bpp: 0.1 })).lossless).toBe(false);
    const noisy = scan(96, 96, 1, 8, 'noise');
    const n = encodeScan(noisy, options({ kind: 'bpp', bpp: 2 }, 'auto'));
    expect(n.lossless).toBe(false);
    expect(n.layers.chosen).not.toBe('lossless');
    expect(n.bytes.length).toBeLessThanOrEqual((2 * 96 * 96) / 8);
  });

  it('is chosen under a quality floor when it is no larger than the lossy file meeting it', () => {
    const flat = scan(96, 80, 3, 8, 'flat');
    const lossy = encodeScan(flat, options({ kind: 'psnr', db: 45 }));
    const r = encodeScan(flat, options({ kind: 'psnr', db: 45 }, 'auto'));
    expect(r.lossless).toBe(true);
    expect(r.bytes.length).toBeLessThanOrEqual(lossy.bytes.length);
    const noisy = scan(48, 48, 1, 8, 'noise');
    expect(encodeScan(noisy, options({ kind: 'psnr', db: 20 }, 'auto')).lossless).toBe(false);
  });
});

describe('the reader refuses damaged lossless files', () => {
  const img = scan(40, 30, 1, 8, 'flat');
  const good = encodeScan(img, options({ kind: 'bpp', bpp: 8 }, 'always'));

  it('a flipped byte anywhere (the compact framing checks one CRC-32 of the file)', () => {
    for (const at of [20, Math.floor(good.bytes.length / 2), good.bytes.length - 6]) {
      const bad = Uint8Array.from(good.bytes);
      bad[at] ^= 0x10;
      expect(() => decodeImageFile(bad, 'bad.rkf')).toThrow(FormatError);
    }
  });

  it('a header whose planes do not match its chunks, or a lossless header in a 1.3 container', () => {
    const { header, view } = readImageHeader(good.bytes, 'x');
    const exact = view.payload(view.find('EXCT', 0));
    const file = (h: object, minor: number, chunks = [{ type: 'EXCT', id: 0, payload: exact }]) =>
      writeContainer([{ type: 'HEAD', id: 0, payload: encodeCompactHeader(h) }, ...chunks], minor);
    expect(decodeImageFile(file(header, 5), 'ok').samples[0]).toEqual(good.decoded.samples[0]);
    expect(() => decodeImageFile(file(header, 3), 'old.rkf')).toThrow(/cannot hold/);
    expect(() => decodeImageFile(file({ ...header, planes: [{ name: 'Y' }] }, 5), 'n.rkf')).toThrow(
      /lists the planes/,
    );
    expect(() => decodeImageFile(file(header, 5, []), 'm.rkf')).toThrow(/EXCT #0\) is missing/);
    expect(() => decodeImageFile(file({ ...header, lossless: false }, 5), 'f.rkf')).toThrow(/lossless flag/);
    expect(() => decodeImageFile(file({ ...header, coding: 'other' }, 5), 'c.rkf')).toThrow(/does not know/);
    // An exact plane cut short: the range decoder's end check names it.
    const cut = [{ type: 'EXCT', id: 0, payload: exact.subarray(0, exact.length - 8) }];
    expect(() => decodeImageFile(file(header, 5, cut), 'cut.rkf')).toThrow(/cannot be decoded/);
  });
});

describe('the contract option', () => {
  it('takes true, false or nothing for lossless, and says what it expected otherwise', () => {
    const base = { budget: { kind: 'bpp', bpp: 1 }, tile: 'auto' } as const;
    for (const lossless of [true, false, undefined])
      expect(() => checkCompressOptions({ ...base, lossless })).not.toThrow();
    expect(() => checkCompressOptions({ ...base, lossless: 'yes' as unknown as boolean })).toThrow(
      'Expected true or false for lossless but received "yes" of type string',
    );
  });
});
