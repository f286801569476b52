// A perfectly flat scan (a blank leaf, a lens-cap frame, a dark field) must never crash the encoder.
// Found while building the collection budget: `compress blank.png --budget 5%` on a 96×64 plane of one grey
// value drove the residual layer's step search to Δ ≈ 1e-3, where the LL coefficient's quantised magnitude
// (≈1.1e9) overflowed the range coder's 2^30 limit ("integer … outside the coder's range").
// The property checked: every budget kind writes a file that fits its byte budget and decodes to within
// 1/1000 of full scale of the flat value everywhere (≥ 60 dB: a flat plane is cheap to code almost exactly),
// for 8-bit, 16-bit, and a scan large enough (> 1.5 MP) to take the residual-first path. A budget below the
// smallest possible file is refused with a UsageError, never a crash (checked with 1 % on the small scans).
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import type { Budget } from '../../src-main/contract/compress';
import { UsageError } from '../../src-main/contract/errors';
import { decodeImageFile } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { COMPRESSORS, compressFile } from '../../src-main/node/services/compress';

function flat(width: number, height: number, bitDepth: 8 | 16, value: number) {
  const plane = new Float32Array(width * height).fill(value);
  const bytesPer = bitDepth / 8;
  return {
    file: `flat-${width}x${height}-${bitDepth}.png`,
    width,
    height,
    channels: 1 as const,
    bitDepth,
    colour: 'gray',
    hasAlpha: false,
    planes: [plane],
    meta: { format: 'png', density: 300, orientation: 1, pages: 1, page: 0 },
    inputBytes: 0,
    rawBytes: width * height * bytesPer,
    sourceSha256: '0'.repeat(64),
  } as Parameters<typeof encodeScan>[0];
}

const BUDGETS: Budget[] = [
  { kind: 'percent', percent: 20 },
  { kind: 'percent', percent: 50 },
  { kind: 'bytes', bytes: 4000 },
  { kind: 'bytes', bytes: 300 },
  { kind: 'bpp', bpp: 2 },
  { kind: 'psnr', db: 60 },
  { kind: 'ssim', value: 0.999 },
  { kind: 'rank', rank: 3 },
];

function roundTrip(img: ReturnType<typeof flat>, budget: Budget, tile: number | 'auto' | undefined) {
  const opts = { budget, encoder: 'rankfold test', ...(tile === undefined ? {} : { tile }) };
  let r: ReturnType<typeof encodeScan>;
  try {
    r = encodeScan(img, opts as Parameters<typeof encodeScan>[1]);
  } catch (e) {
    // The one acceptable failure: a clean refusal of a budget below the smallest possible file.
    if (e instanceof UsageError && /below the smallest possible file/.test(e.message))
      return { refused: true, bytes: 0, worst: 0, max: 1 };
    throw e;
  }
  const out = decodeImageFile(r.bytes, img.file, { compressors: COMPRESSORS });
  let worst = 0;
  for (const p of out.samples) for (const v of p) worst = Math.max(worst, Math.abs(v - img.planes[0][0]));
  return { refused: false, bytes: r.bytes.length, worst, max: img.bitDepth === 16 ? 65535 : 255 };
}

describe('flat scans under every budget', () => {
  for (const [w, h, depth, value] of [
    [96, 64, 8, 128],
    [80, 48, 16, 40000],
  ] as const) {
    for (const budget of BUDGETS)
      for (const tile of [0, 32, 'auto'] as const)
        it(`${w}×${h} ${depth}-bit, ${JSON.stringify(budget)}, tile ${tile}`, () => {
          const img = flat(w, h, depth, value);
          const r = roundTrip(img, budget, tile);
          expect(r.worst).toBeLessThanOrEqual(r.max / 1000);
          if (r.refused) return;
          if (budget.kind === 'bytes') expect(r.bytes).toBeLessThanOrEqual(budget.bytes);
          if (budget.kind === 'percent')
            expect(r.bytes).toBeLessThanOrEqual((img.rawBytes * budget.percent) / 100);
        });
  }

  it('a budget below the smallest file is refused, not a crash', () => {
    expect(roundTrip(flat(96, 64, 8, 128), { kind: 'percent', percent: 1 }, 0).refused).toBe(true);
  });

  it('a 1600×1050 flat scan (residual-first path) at 5 % and at a 60 dB floor', () => {
    const img = flat(1600, 1050, 8, 200);
    for (const budget of [
      { kind: 'percent', percent: 5 },
      { kind: 'psnr', db: 60 },
    ] as Budget[]) {
      const r = roundTrip(img, budget, 'auto');
      expect(r.worst).toBeLessThanOrEqual(r.max / 1000);
    }
  }, 120_000);
});

describe('flat scans through the compress service (the path the CLI takes)', () => {
  it('a 96×64 grey PNG of one value at 300, 400 and 2000 bytes: a file that decodes to that value, or a refusal', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'rankfold-flat-'));
    try {
      const input = join(dir, 'blank leaf.png');
      await sharp({ create: { width: 96, height: 64, channels: 3, background: { r: 128, g: 128, b: 128 } } })
        .toColourspace('b-w')
        .png()
        .toFile(input);
      for (const bytes of [300, 400, 2000]) {
        const output = join(dir, `out-${bytes}.rkf`);
        try {
          await compressFile(input, output, { budget: { kind: 'bytes', bytes }, tile: 'auto' });
        } catch (e) {
          expect(e).toBeInstanceOf(UsageError);
          expect(existsSync(output)).toBe(false);
          continue;
        }
        const file = readFileSync(output);
        expect(file.length).toBeLessThanOrEqual(bytes);
        const out = decodeImageFile(file, output, { compressors: COMPRESSORS });
        for (const v of out.samples[0]) expect(Math.abs(v - 128)).toBeLessThanOrEqual(0.255);
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 60_000);
});

describe('a container read from inside a larger buffer', () => {
  // Node's readFileSync returns small files in a shared pool, so a file's bytes often start at a non-zero
  // byteOffset. The compact header once read its 8-byte floats (the residual step) with `.slice().buffer`,
  // which on a Buffer is the whole pool: the residual decoded at a wrong step, silently.
  it('decodes identically from a fresh copy and from a view at an odd offset', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'rankfold-offset-'));
    let bytes: Uint8Array;
    try {
      const input = join(dir, 'leaf.png');
      await sharp({ create: { width: 96, height: 64, channels: 3, background: { r: 128, g: 128, b: 128 } } })
        .toColourspace('b-w')
        .png()
        .toFile(input);
      await compressFile(input, join(dir, 'leaf.rkf'), {
        budget: { kind: 'bytes', bytes: 300 },
        tile: 'auto',
      });
      bytes = Uint8Array.from(readFileSync(join(dir, 'leaf.rkf')));
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
    const pool = Buffer.alloc(bytes.length + 4099, 0x5a);
    pool.set(bytes, 4099);
    const view = pool.subarray(4099);
    const a = decodeImageFile(Uint8Array.from(bytes), 'a.rkf', { compressors: COMPRESSORS }).samples[0];
    const b = decodeImageFile(view, 'b.rkf', { compressors: COMPRESSORS }).samples[0];
    expect(Array.from(new Set(a))).toEqual([128]);
    expect(Array.from(b)).toEqual(Array.from(a));
  }, 60_000);
});
