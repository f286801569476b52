// End to end through the services: budgets met on disk, rank-K near the Eckart–Young optimum, quality
// floors met on the expanded file, 8/16-bit gray/RGB/alpha round trips, metadata carried.
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, describe, expect, it } from 'vitest';
import { FormatError, OutputError } from '../../src-main/contract';
import { psnrPlanes, ssimPlanes } from '../../src-main/engine/metrics';
import { decodeImage } from '../../src-main/node/image/decode';
import { compressFile } from '../../src-main/node/services/compress';
import { expandFile } from '../../src-main/node/services/expand';
import { image, reference } from '../helpers/fixtures';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-codec-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
let n = 0;
const out = (ext: string) => join(dir, `f${n++}.${ext}`);

async function synthetic(
  channels: 1 | 2 | 3 | 4,
  depth: 8 | 16,
  w = 96,
  h = 80,
  density?: number,
): Promise<string> {
  const max = depth === 16 ? 65535 : 255;
  const data = depth === 16 ? new Uint16Array(w * h * channels) : new Uint8Array(w * h * channels);
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++)
      for (let c = 0; c < channels; c++) {
        const isAlpha = (channels === 2 && c === 1) || (channels === 4 && c === 3);
        const v = isAlpha
          ? x < w / 3
            ? max
            : (max * y) / h
          : (0.5 + 0.4 * Math.sin((x + 5 * c) / 9) * Math.cos(y / 13)) * max +
            (((x >> 3) + (y >> 3)) % 2) * 0.05 * max;
        data[(y * w + x) * channels + c] = Math.round(Math.min(max, Math.max(0, v)));
      }
  const file = out('png');
  // sharp reads a Uint16Array as 16-bit raw samples and a Uint8Array as 8-bit.
  let img = sharp(data, { raw: { width: w, height: h, channels } });
  img = img.toColourspace(
    depth === 16 ? (channels >= 3 ? 'rgb16' : 'grey16') : channels >= 3 ? 'srgb' : 'b-w',
  );
  img = img.png();
  if (density) img = img.withMetadata({ density });
  await img.toFile(file);
  return file;
}

describe('byte budgets', () => {
  it('meets --budget on disk (page.png, auto tiles) and uses most of it', async () => {
    const f = out('rkf');
    const r = await compressFile(image('page.png'), f, {
      budget: { kind: 'bytes', bytes: 4000 },
      tile: 'auto',
    });
    expect(statSync(f).size).toBeLessThanOrEqual(4000);
    expect(r.outputBytes).toBe(statSync(f).size);
    expect(r.outputBytes).toBeGreaterThan(3600);
  });

  it('meets --bpp and a percentage budget on disk (text.png, 32 px tiles; gray 8-bit)', async () => {
    const f = out('rkf');
    const r = await compressFile(image('text.png'), f, { budget: { kind: 'bpp', bpp: 0.4 }, tile: 32 });
    expect(statSync(f).size).toBeLessThanOrEqual(Math.floor((0.4 * 448 * 172) / 8));
    const g = out('rkf');
    await compressFile(image('text.png'), g, { budget: { kind: 'percent', percent: 5 }, tile: 0 });
    expect(statSync(g).size).toBeLessThanOrEqual(Math.floor(0.05 * 448 * 172));
    // PSNR reported is measured on the decoded file: re-measure it from the expanded PNG.
    const png = out('png');
    await expandFile(f, png);
    const a = await decodeImage(image('text.png'));
    const b = await decodeImage(png);
    expect(psnrPlanes(a.planes, b.planes, 255)).toBeCloseTo(r.psnr, 6);
  });

  it('refuses a budget below the smallest possible file, and writes nothing', async () => {
    const f = out('rkf');
    await expect(
      compressFile(image('page.png'), f, { budget: { kind: 'bytes', bytes: 100 }, tile: 16 }),
    ).rejects.toThrow(/below the smallest possible file/);
    expect(() => statSync(f)).toThrow();
  });
});

describe('--rank K against Eckart–Young', () => {
  // rank_approx_images.json: PSNR of the unrounded rank-k truncation, numpy 1.24.2 (LAPACK dgesdd).
  const ref = reference('rank_approx_images.json');
  for (const name of ['page', 'text']) {
    it(`${name}.png: PSNR within 0.5 dB of the optimal rank-k PSNR (k = 5, 20)`, async () => {
      const entry = ref.images.find((i: { file: string }) => i.file === `${name}.png`);
      for (const k of [5, 20]) {
        const want = entry.rank_k.find((x: { k: number }) => x.k === k).psnr_eckart_young_db;
        const r = await compressFile(image(`${name}.png`), out('rkf'), {
          budget: { kind: 'rank', rank: k },
          tile: 0,
        });
        expect(r.ranks[0].rank).toBe(k);
        expect(Math.abs(r.psnr - want)).toBeLessThan(0.5);
        // Our own Eckart–Young figure agrees with the reference Frobenius error.
        const fro = entry.rank_k.find((x: { k: number }) => x.k === k).frobenius_error;
        expect(r.errors.frobeniusOptimal / fro).toBeCloseTo(1, 6);
      }
    });
  }
});

describe('quality floors', () => {
  it('--min-psnr is met on the expanded file', async () => {
    const f = out('rkf');
    const r = await compressFile(image('text.png'), f, { budget: { kind: 'psnr', db: 30 }, tile: 32 });
    const png = out('png');
    await expandFile(f, png);
    const a = await decodeImage(image('text.png'));
    const b = await decodeImage(png);
    expect(psnrPlanes(a.planes, b.planes, 255)).toBeGreaterThanOrEqual(30);
    expect(r.psnr).toBeGreaterThanOrEqual(30);
    // "Smallest found": a slightly higher floor cannot be cheaper.
    const r2 = await compressFile(image('text.png'), out('rkf'), {
      budget: { kind: 'psnr', db: 33 },
      tile: 32,
    });
    expect(r2.outputBytes).toBeGreaterThan(r.outputBytes);
  });

  it('--min-ssim is met on the expanded file (SSIM per Wang et al. 2004, engine/metrics)', async () => {
    const f = out('rkf');
    await compressFile(image('page.png'), f, { budget: { kind: 'ssim', value: 0.9 }, tile: 32 });
    const png = out('png');
    await expandFile(f, png);
    const a = await decodeImage(image('page.png'));
    const b = await decodeImage(png);
    expect(ssimPlanes(a.planes, b.planes, a.width, a.height, 255)).toBeGreaterThanOrEqual(0.9);
  });
});

describe('round trips', () => {
  const cases: Array<[1 | 2 | 3 | 4, 8 | 16]> = [
    [1, 8],
    [1, 16],
    [2, 8],
    [3, 8],
    [3, 16],
    [4, 8],
  ];
  for (const [channels, depth] of cases) {
    it(`${channels} channel(s), ${depth}-bit: depth, size and alpha survive; PSNR uses MAX ${depth === 16 ? 65535 : 255}`, async () => {
      const src = await synthetic(channels, depth);
      const f = out('rkf');
      const r = await compressFile(src, f, { budget: { kind: 'bpp', bpp: 2 }, tile: 32 });
      const png = out(depth === 16 ? 'tif' : 'png');
      const e = await expandFile(f, png);
      expect(e.bitDepth).toBe(depth);
      const a = await decodeImage(src);
      const b = await decodeImage(png);
      expect(a.channels).toBe(channels);
      expect([b.width, b.height, b.channels, b.bitDepth]).toEqual([
        a.width,
        a.height,
        a.channels,
        a.bitDepth,
      ]);
      const nc = channels >= 3 ? 3 : 1;
      const max = depth === 16 ? 65535 : 255;
      expect(psnrPlanes(a.planes.slice(0, nc), b.planes.slice(0, nc), max)).toBeCloseTo(r.psnr, 6);
      expect(r.psnr).toBeGreaterThan(30);
      if (channels === 2 || channels === 4)
        expect(Array.from(b.planes[channels - 1])).toEqual(Array.from(a.planes[channels - 1]));
    });
  }

  it('16-bit fixture (chessboard_GRAY_U16.tif) stays 16-bit', async () => {
    const f = out('rkf');
    const r = await compressFile(image('chessboard_GRAY_U16.tif'), f, {
      budget: { kind: 'rank', rank: 4 },
      tile: 0,
    });
    expect(r.bitDepth).toBe(16);
    const tif = out('tif');
    await expandFile(f, tif);
    expect((await sharp(tif).metadata()).depth).toBe('ushort');
  });

  it('full rank of a small scan is lossless, and expand checks the stored SHA-256', async () => {
    const src = await synthetic(1, 8, 24, 20);
    const f = out('rkf');
    const r = await compressFile(src, f, { budget: { kind: 'rank', rank: 20 }, tile: 0 });
    expect(r.lossless).toBe(true);
    const e = await expandFile(f, out('png'));
    expect(e.hashChecked).toBe(true);
    expect(e.sourceSha256).toBe((await decodeImage(src)).sourceSha256);
  });

  it('carries DPI back to the expanded file', async () => {
    const src = await synthetic(1, 8, 64, 48, 300);
    const f = out('rkf');
    await compressFile(src, f, { budget: { kind: 'bpp', bpp: 6 }, tile: 16 });
    const png = out('png');
    const e = await expandFile(f, png);
    expect(e.metadata.density).toBeCloseTo(300, 1);
    // PNG pHYs stores pixels per metre (W3C PNG §11.3.5.3), so 300 dpi returns to within ±0.002.
    expect(Math.abs(((await sharp(png).metadata()).density ?? 0) - 300)).toBeLessThan(0.01);
  });
});

describe('damaged containers', () => {
  let good: Uint8Array;
  const damaged = async (mutate: (b: Uint8Array) => Uint8Array, pattern: RegExp) => {
    if (!good) {
      const f = out('rkf');
      await compressFile(image('page.png'), f, { budget: { kind: 'bytes', bytes: 3000 }, tile: 32 });
      good = new Uint8Array(readFileSync(f));
    }
    const bad = out('rkf');
    writeFileSync(bad, mutate(good.slice()));
    const target = out('png');
    const err = await expandFile(bad, target).catch((e) => e);
    expect(err).toBeInstanceOf(FormatError);
    expect(err.message).toContain(bad);
    expect(err.message).toMatch(pattern);
    expect(() => statSync(target)).toThrow(); // nothing written
  };
  it('truncated', () => damaged((b) => b.subarray(0, Math.floor(b.length * 0.7)), /truncated/));
  it('bad CRC', () =>
    damaged((b) => {
      b[200] ^= 1;
      return b;
    }, /CRC-32/));
  it('unknown version', () =>
    damaged((b) => {
      b[9] = 9;
      return b;
    }, /version 9/));
  it('oversized and inconsistent dimensions (header rewritten with valid CRCs)', async () => {
    const { readContainer, writeContainer } = await import('../../src-main/engine/codec/container');
    const { readImageHeader } = await import('../../src-main/engine/codec/image-file');
    const rewrite = (edit: (h: Record<string, unknown>) => void) => (b: Uint8Array) => {
      const v = readContainer(b, 'x');
      const chunks = v.entries.map((e, k) => ({ type: e.type, id: e.id, payload: v.payload(k).slice() }));
      // The header as read (a two-layer file of container 1.3 stores it compactly), rewritten as JSON (1.1).
      const h = { ...readImageHeader(b, 'x').header } as unknown as Record<string, unknown>;
      edit(h);
      chunks[0].payload = Uint8Array.from(JSON.stringify(h), (c) => c.charCodeAt(0));
      return writeContainer(chunks);
    };
    await damaged(
      rewrite((h) => {
        h.width = 100000;
        h.height = 100000;
      }),
      /over the limit/,
    );
    await damaged(
      rewrite((h) => (h.width = -3)),
      /impossible dimensions/,
    );
    await damaged(
      rewrite((h) => (h.width = 385)),
      /cannot be decoded|does not match/,
    );
  });
  it('refuses to overwrite without force', async () => {
    const f = out('rkf');
    writeFileSync(f, 'x');
    await expect(
      compressFile(image('page.png'), f, { budget: { kind: 'rank', rank: 2 }, tile: 0 }),
    ).rejects.toBeInstanceOf(OutputError);
    expect(readFileSync(f, 'utf8')).toBe('x');
  });
});

describe('metadata and tiles', () => {
  it('restores the ICC profile and the EXIF orientation (stored layout and tag)', async () => {
    // A JPEG with EXIF orientation 6 (rotate 90° CW to display, EXIF 2.32 tag 0x0112) and an sRGB ICC profile.
    const w = 64;
    const h = 40;
    const raw = new Uint8Array(w * h * 3).map((_, i) => (i * 37) % 251);
    const src = out('jpg');
    await sharp(raw, { raw: { width: w, height: h, channels: 3 } })
      .withIccProfile('srgb')
      .withMetadata({ orientation: 6 })
      .jpeg({ quality: 95 })
      .toFile(src);
    const f = out('rkf');
    const r = await compressFile(src, f, { budget: { kind: 'bpp', bpp: 8 }, tile: 16 });
    expect([r.width, r.height]).toEqual([h, w]); // decoded upright
    const png = out('png');
    const e = await expandFile(f, png);
    expect(e.metadata.icc).toBe(true);
    const m = await sharp(png).metadata();
    expect(m.icc).toBeDefined();
    expect(m.orientation).toBe(6);
    expect([m.width, m.height]).toEqual([w, h]); // stored layout, as the source
  });

  it('checks the lossless alpha plane against its stored SHA-256', async () => {
    const src = await synthetic(4, 8, 48, 40);
    const f = out('rkf');
    await compressFile(src, f, { budget: { kind: 'bpp', bpp: 8 }, tile: 16 });
    const e = await expandFile(f, out('png'));
    expect(e.alphaChecked).toBe(true);
  });

  it('shows no seams: tile-edge pixels are not much worse than the rest (camera.png, 32 px tiles, 1 bpp)', async () => {
    const f = out('rkf');
    await compressFile(image('camera.png'), f, { budget: { kind: 'bpp', bpp: 1 }, tile: 32 });
    const png = out('png');
    await expandFile(f, png);
    const a = (await decodeImage(image('camera.png'))).planes[0];
    const b = (await decodeImage(png)).planes[0];
    let edge = 0;
    let ne = 0;
    let inner = 0;
    let ni = 0;
    for (let y = 0; y < 512; y++)
      for (let x = 0; x < 512; x++) {
        const d = (a[y * 512 + x] - b[y * 512 + x]) ** 2;
        const onEdge = x % 32 === 0 || x % 32 === 31 || y % 32 === 0 || y % 32 === 31;
        if (onEdge) {
          edge += d;
          ne++;
        } else {
          inner += d;
          ni++;
        }
      }
    // Mean squared error on the tiles' border pixels stays within 1.5× that of the interior (common practice
    // for block codecs: blocking shows as a jump of the border error).
    expect(edge / ne).toBeLessThan(1.5 * (inner / ni));
  });
});

describe('service hooks', () => {
  it('reports progress and stops on an aborted signal without writing', async () => {
    const stages: string[] = [];
    await compressFile(
      image('page.png'),
      out('rkf'),
      { budget: { kind: 'bpp', bpp: 0.5 }, tile: 32 },
      {
        onProgress: (p) => stages.push(p.stage),
      },
    );
    expect(stages[0]).toBe('decode');
    expect(stages).toContain('done');
    const ac = new AbortController();
    ac.abort();
    const f = out('rkf');
    await expect(
      compressFile(
        image('page.png'),
        f,
        { budget: { kind: 'bpp', bpp: 0.5 }, tile: 32 },
        { signal: ac.signal },
      ),
    ).rejects.toThrow(/cancelled/);
    expect(() => statSync(f)).toThrow();
  });
});
