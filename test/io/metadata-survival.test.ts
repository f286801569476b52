/**
 * Metadata survives compress → expand for every input Rankfold claims to read: PNG and TIFF (grey,
 * grey+alpha, RGB, RGBA; 8 and 16 bits), JPEG (grey, RGB; 8 bits) and WebP (RGB, RGBA; 8 bits), each
 * expanded to PNG and to TIFF. The ICC profile must come back byte for byte, the resolution as
 * 300 dpi and the orientation as 6.
 *
 * The outputs are checked with readers written here, independent of sharp/libvips and of the code
 * under test: PNG chunks parsed by hand (W3C PNG 3rd ed. §5.3; iCCP §11.3.2.4, pHYs §11.3.5.3, eXIf
 * §11.3.6.1) and TIFF IFD0 parsed by hand (TIFF 6.0 §2; tags 274 Orientation, 282/283 X/YResolution
 * RATIONAL, 296 ResolutionUnit; ICC.1:2022 Annex B.4 tag 34675). JPEG and WebP inputs are made with
 * sharp 0.35.5 (libvips 8.18.7); their own metadata is read with sharp, as stated per case.
 *
 * Also: the resolution case of the fault campaign (a PNG whose pHYs says 2^32−1 pixels per metre)
 * compresses with a warning and expands, and a container written before that check (density stored
 * out of range) still expands, with a warning, pixels intact.
 */
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { inflateSync } from 'node:zlib';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { decodeImage } from '../../src-main/node/image/decode';
import { encodeImageBuffer } from '../../src-main/node/image/encode';
import { compressDecoded, compressFile } from '../../src-main/node/services/compress';
import { expandFile } from '../../src-main/node/services/expand';
import { inspectScan } from '../../src-main/node/services/inspect';
import { greyIccProfile, physChunk, pngChunks, replacePngChunk } from './hostile-fixtures';

let dir: string;
let rgbIcc: Buffer;
const greyIcc = greyIccProfile();
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-meta-'));
  // A real RGB profile: libvips' built-in Display P3 profile, as sharp attaches it.
  const p3 = await sharp({ create: { width: 2, height: 2, channels: 3, background: '#808080' } })
    .withIccProfile('p3')
    .png()
    .toBuffer();
  rgbIcc = (await sharp(p3).metadata()).icc as Buffer;
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

// ── Independent readers ─────────────────────────────────────────────────────────────────────────────────
function pngMeta(png: Buffer) {
  const chunks = pngChunks(png);
  const iccp = chunks.find((c) => c.type === 'iCCP');
  let icc: Buffer | undefined;
  if (iccp) {
    const nul = iccp.data.indexOf(0);
    icc = inflateSync(iccp.data.subarray(nul + 2));
  }
  const phys = chunks.find((c) => c.type === 'pHYs');
  const exif = chunks.find((c) => c.type === 'eXIf');
  return {
    icc,
    ppm: phys && phys.data[8] === 1 ? phys.data.readUInt32BE(0) : undefined,
    orientation: exif ? tiffTags(exif.data).get(274)?.value : undefined,
  };
}

interface Tag {
  type: number;
  count: number;
  value: number;
  at: number;
}
/** IFD0 of a classic TIFF (or an Exif block): tag → type, count, first value (SHORT/LONG) and value offset. */
function tiffTags(b: Buffer): Map<number, Tag> {
  const le = b.toString('latin1', 0, 2) === 'II';
  const u16 = (o: number) => (le ? b.readUInt16LE(o) : b.readUInt16BE(o));
  const u32 = (o: number) => (le ? b.readUInt32LE(o) : b.readUInt32BE(o));
  expect(u16(2)).toBe(42);
  const ifd = u32(4);
  const out = new Map<number, Tag>();
  for (let i = 0; i < u16(ifd); i++) {
    const e = ifd + 2 + 12 * i;
    const type = u16(e + 2);
    const count = u32(e + 4);
    out.set(u16(e), { type, count, value: type === 3 ? u16(e + 8) : u32(e + 8), at: u32(e + 8) });
  }
  return out;
}
function tiffMeta(t: Buffer) {
  const le = t.toString('latin1', 0, 2) === 'II';
  const u32 = (o: number) => (le ? t.readUInt32LE(o) : t.readUInt32BE(o));
  const tags = tiffTags(t);
  const icc = tags.get(34675);
  const xres = tags.get(282);
  return {
    icc: icc ? t.subarray(icc.at, icc.at + icc.count) : undefined,
    dpi: xres && tags.get(296)?.value === 2 ? u32(xres.at) / u32(xres.at + 4) : undefined,
    orientation: tags.get(274)?.value,
  };
}
/** ICC profile from JPEG APP2 "ICC_PROFILE" segments (ICC.1:2022 Annex B.4), concatenated in order. */
function jpegIcc(j: Buffer): Buffer | undefined {
  const parts: Array<[number, Buffer]> = [];
  let p = 2;
  while (p + 4 <= j.length && j[p] === 0xff) {
    const marker = j[p + 1];
    if (marker === 0xda) break;
    const len = j.readUInt16BE(p + 2);
    if (marker === 0xe2 && j.toString('latin1', p + 4, p + 16) === 'ICC_PROFILE\0')
      parts.push([j[p + 16], j.subarray(p + 18, p + 2 + len)]);
    p += 2 + len;
  }
  return parts.length ? Buffer.concat(parts.sort((a, b) => a[0] - b[0]).map((x) => x[1])) : undefined;
}
/**
 * An APP1 Exif segment with IFD0 Orientation, X/YResolution and ResolutionUnit (CIPA DC-008 Exif 2.32
 * §4.5.4; tags 0x0112, 0x011A, 0x011B, 0x0128). libvips takes the resolution from Exif when there is an
 * Exif block, so it must be there too.
 */
function exifApp1(orientation: number, dpi: number): Buffer {
  const t = Buffer.alloc(8 + 2 + 4 * 12 + 4 + 16);
  t.write('MM', 0, 'latin1');
  t.writeUInt16BE(42, 2);
  t.writeUInt32BE(8, 4);
  t.writeUInt16BE(4, 8);
  const entry = (k: number, tag: number, type: number, value: (o: number) => void) => {
    const o = 10 + 12 * k;
    t.writeUInt16BE(tag, o);
    t.writeUInt16BE(type, o + 2);
    t.writeUInt32BE(1, o + 4);
    value(o + 8);
  };
  const rat = 8 + 2 + 48 + 4;
  entry(0, 0x0112, 3, (o) => t.writeUInt16BE(orientation, o));
  entry(1, 0x011a, 5, (o) => t.writeUInt32BE(rat, o));
  entry(2, 0x011b, 5, (o) => t.writeUInt32BE(rat + 8, o));
  entry(3, 0x0128, 3, (o) => t.writeUInt16BE(2, o));
  for (const at of [rat, rat + 8]) {
    t.writeUInt32BE(dpi, at);
    t.writeUInt32BE(1, at + 4);
  }
  const head = Buffer.alloc(10);
  head.writeUInt16BE(0xffe1, 0);
  head.writeUInt16BE(8 + t.length, 2);
  head.write('Exif\0\0', 4, 'latin1');
  return Buffer.concat([head, t]);
}

/** Insert one APP2 ICC_PROFILE segment (and optionally an Exif APP1) after SOI, dropping existing ones (profiles here are < 64 kB). */
function withJpegIcc(j: Buffer, icc: Buffer, exif?: Buffer): Buffer {
  const seg = Buffer.alloc(18 + icc.length);
  seg.writeUInt16BE(0xffe2, 0);
  seg.writeUInt16BE(16 + icc.length, 2);
  seg.write('ICC_PROFILE\0', 4, 'latin1');
  seg[16] = 1;
  seg[17] = 1;
  icc.copy(seg, 18);
  const rest: Buffer[] = [];
  let p = 2;
  while (p + 4 <= j.length && j[p] === 0xff && j[p + 1] !== 0xda) {
    const len = j.readUInt16BE(p + 2);
    const isIcc = j[p + 1] === 0xe2 && j.toString('latin1', p + 4, p + 16) === 'ICC_PROFILE\0';
    const isExif = exif && j[p + 1] === 0xe1;
    if (!isIcc && !isExif) rest.push(j.subarray(p, p + 2 + len));
    p += 2 + len;
  }
  return Buffer.concat([j.subarray(0, 2), ...(exif ? [exif] : []), seg, ...rest, j.subarray(p)]);
}

// ── Inputs ──────────────────────────────────────────────────────────────────────────────────────────────
const W = 24;
const H = 16;
const planesFor = (channels: number, bitDepth: 8 | 16) =>
  Array.from({ length: channels }, (_, c) =>
    Float32Array.from({ length: W * H }, (_, i) => {
      const v = ((i * (3 + c * 5)) % 97) + (c === channels - 1 && channels % 2 === 0 ? 100 : 20);
      return bitDepth === 16 ? v * 257 + 3 : v;
    }),
  );

interface Input {
  name: string;
  /** The file, its ICC profile and its resolution in dpi (undefined: none). */
  make: () => Promise<{ file: string; icc: Buffer; dpi?: number }>;
}
const inputs: Input[] = [];
for (const format of ['png', 'tiff'] as const)
  for (const channels of [1, 2, 3, 4] as const)
    for (const bitDepth of [8, 16] as const)
      inputs.push({
        name: `${format.toUpperCase()} ${['grey', 'grey+alpha', 'RGB', 'RGBA'][channels - 1]} ${bitDepth}-bit`,
        make: async () => {
          const icc = channels <= 2 ? greyIcc : rgbIcc;
          const bytes = await encodeImageBuffer(
            {
              width: W,
              height: H,
              channels,
              bitDepth,
              planes: planesFor(channels, bitDepth),
              meta: { icc, density: 300, orientation: 6 },
            },
            { format },
          );
          const file = join(dir, `in-${format}-${channels}-${bitDepth}.${format === 'png' ? 'png' : 'tif'}`);
          await writeFile(file, bytes);
          // The input really holds what we claim (read by hand, not by the code under test).
          const m = format === 'png' ? pngMeta(bytes) : tiffMeta(bytes);
          expect(Buffer.compare(m.icc as Buffer, icc)).toBe(0);
          expect(m.orientation).toBe(6);
          return { file, icc, dpi: 300 };
        },
      });
// The fault-campaign case: a grey PNG carrying an RGB profile (libpng 1.6.58 will not report it, PNG 3rd
// ed. §11.3.2.4 wants a grey profile on grey images; Rankfold keeps it byte for byte anyway).
for (const bitDepth of [8, 16] as const)
  inputs.push({
    name: `PNG grey ${bitDepth}-bit with an RGB profile`,
    make: async () => {
      const bytes = await encodeImageBuffer(
        {
          width: W,
          height: H,
          channels: 1,
          bitDepth,
          planes: planesFor(1, bitDepth),
          meta: { icc: rgbIcc, density: 300, orientation: 6 },
        },
        { format: 'png' },
      );
      const file = join(dir, `in-grey-rgbicc-${bitDepth}.png`);
      await writeFile(file, bytes);
      expect((await sharp(file).metadata()).icc).toBeUndefined(); // what libpng does (why this case exists)
      return { file, icc: rgbIcc, dpi: 300 };
    },
  });
for (const channels of [1, 3] as const)
  inputs.push({
    name: `JPEG ${channels === 1 ? 'grey' : 'RGB'} 8-bit (sharp/mozjpeg; APP2 profile inserted by hand)`,
    make: async () => {
      const icc = channels === 1 ? greyIcc : rgbIcc;
      const raw = Buffer.from(Uint8Array.from({ length: W * H * channels }, (_, i) => (i * 13) % 251));
      let img = sharp(raw, { raw: { width: W, height: H, channels } });
      if (channels === 1) img = img.toColourspace('b-w');
      // sharp's withMetadata would attach sRGB and turn grey into RGB, so Exif and ICC are inserted by hand.
      const jpeg = await img.withDensity(300).jpeg({ quality: 95 }).toBuffer();
      const bytes = withJpegIcc(jpeg, icc, exifApp1(6, 300));
      const file = join(dir, `in-${channels}.jpg`);
      await writeFile(file, bytes);
      const m = await sharp(file).metadata(); // input check with sharp, as stated in the file comment
      expect([m.density, m.orientation, m.channels]).toEqual([300, 6, channels]);
      expect(Buffer.compare(jpegIcc(bytes) as Buffer, icc)).toBe(0);
      return { file, icc, dpi: 300 };
    },
  });
for (const channels of [3, 4] as const)
  inputs.push({
    name: `WebP ${channels === 3 ? 'RGB' : 'RGBA'} 8-bit lossless (sharp/libwebp; resolution from its Exif block)`,
    make: async () => {
      const png = await encodeImageBuffer(
        { width: W, height: H, channels, bitDepth: 8, planes: planesFor(channels, 8), meta: { icc: rgbIcc } },
        { format: 'png' },
      );
      const bytes = await sharp(png)
        .keepIccProfile()
        .withMetadata({ orientation: 6 })
        .webp({ lossless: true })
        .toBuffer();
      const file = join(dir, `in-${channels}.webp`);
      await writeFile(file, bytes);
      const m = await sharp(file).metadata(); // input check with sharp, as stated in the file comment
      expect([m.orientation, m.channels]).toEqual([6, channels]);
      // libvips writes its default resolution (1 pixel/mm = 25.4 dpi) into the WebP's Exif block.
      return { file, icc: Buffer.from(m.icc as Buffer), dpi: m.density };
    },
  });

describe('ICC profile, resolution and orientation survive compress → expand (PNG and TIFF outputs)', () => {
  it.each(inputs.map((x) => [x.name, x] as const))('%s', async (_name, input) => {
    const { file, icc, dpi } = await input.make();
    const rkf = `${file}.rkf`;
    const report = await compressFile(file, rkf, { budget: { kind: 'rank', rank: 16 }, tile: 0 });
    expect(report.warnings).toBeUndefined();
    for (const ext of ['png', 'tif'] as const) {
      const out = `${file}.out.${ext}`;
      const ex = await expandFile(rkf, out);
      expect(ex.warnings).toBeUndefined();
      const bytes = await readFile(out);
      const m = ext === 'png' ? pngMeta(bytes) : tiffMeta(bytes);
      expect(m.icc, `${out}: ICC profile`).toBeDefined();
      expect(Buffer.compare(m.icc as Buffer, icc), `${out}: ICC bytes`).toBe(0);
      expect(m.orientation, `${out}: orientation`).toBe(6);
      if (ext === 'png') {
        const ppm = (m as ReturnType<typeof pngMeta>).ppm;
        // 300 dpi = 11811.02 px/m, stored as whole pixels per metre (PNG 3rd ed. §11.3.5.3).
        expect(ppm).toBe(dpi === undefined ? undefined : Math.round(dpi / 0.0254));
      } else if (dpi === undefined) expect((m as ReturnType<typeof tiffMeta>).dpi).toBeUndefined();
      else expect((m as ReturnType<typeof tiffMeta>).dpi).toBeCloseTo(dpi, 6);
    }
  });
});

describe('a resolution the source does not state is not invented', () => {
  it('a PNG without pHYs decodes with no density (libvips 8.18.7 reports 72) and expands with no pHYs and TIFF ResolutionUnit 1', async () => {
    const png = await encodeImageBuffer(
      { width: W, height: H, channels: 1, bitDepth: 8, planes: planesFor(1, 8) },
      { format: 'png' },
    );
    expect(pngChunks(png).some((c) => c.type === 'pHYs')).toBe(false);
    const file = join(dir, 'no-phys.png');
    await writeFile(file, png);
    expect((await sharp(file).metadata()).density).toBe(72); // why the check exists
    expect((await decodeImage(file)).meta.density).toBeUndefined();
    await compressFile(file, `${file}.rkf`, { budget: { kind: 'rank', rank: 16 }, tile: 0 });
    await expandFile(`${file}.rkf`, `${file}.png`);
    await expandFile(`${file}.rkf`, `${file}.tif`);
    expect(pngMeta(await readFile(`${file}.png`)).ppm).toBeUndefined();
    const tags = tiffTags(await readFile(`${file}.tif`));
    expect(tags.get(296)?.value).toBe(1); // TIFF 6.0 ResolutionUnit 1 = no absolute unit
  });
});

describe('out-of-range resolution: dropped with a warning on compress, and on expand of old containers', () => {
  it('a PNG whose pHYs says 2^32−1 px/m compresses with a warning and expands (PNG 3rd ed. §11.3.5.3)', async () => {
    const png = await encodeImageBuffer(
      { width: W, height: H, channels: 1, bitDepth: 8, planes: planesFor(1, 8) },
      { format: 'png' },
    );
    const file = join(dir, 'phys-max.png');
    await writeFile(file, replacePngChunk(png, 'pHYs', physChunk(0xffffffff, 0xffffffff, 1)));
    const report = await compressFile(file, `${file}.rkf`, { budget: { kind: 'rank', rank: 16 }, tile: 0 });
    expect(report.warnings).toEqual([
      `${file}: its resolution of 109092169 pixels per inch is outside the 0–1000000 pixels per inch that PNG and TIFF output can hold, so it is left out and the pixels are kept`,
    ]);
    for (const ext of ['png', 'tif']) {
      const ex = await expandFile(`${file}.rkf`, `${file}.${ext}`);
      expect(ex.metadata.density).toBeUndefined();
      expect(ex.warnings).toBeUndefined();
    }
    // inspect says the same, on the whole-image path and on the sketched large-scan path.
    const want = [
      `${file}: its resolution of 109092169 pixels per inch is outside the 0–1000000 pixels per inch that PNG and TIFF output can hold, so it is left out and the pixels are kept`,
    ];
    for (const sketchAbove of [undefined, 0]) {
      const seen = await inspectScan({ file }, { sketchAbove });
      expect(seen.density).toBeUndefined();
      expect(seen.warnings).toEqual(want);
    }
  });

  it('the large-scan (tiled, integer-sample) path keeps the same metadata: no out-of-range density, the grey PNG’s RGB profile', async () => {
    const big = await encodeImageBuffer(
      {
        width: 64,
        height: 48,
        channels: 1,
        bitDepth: 8,
        planes: [Float32Array.from({ length: 64 * 48 }, (_, i) => i % 251)],
        meta: { icc: rgbIcc },
      },
      { format: 'png' },
    );
    const file = join(dir, 'tiled-phys.png');
    await writeFile(file, replacePngChunk(big, 'pHYs', physChunk(0xffffffff, 0xffffffff, 1)));
    // tiledAbove: 0 sends even this small scan down the path large scans take (services/compress.ts).
    await compressFile(
      file,
      `${file}.rkf`,
      { budget: { kind: 'percent', percent: 50 }, tile: 32 },
      { tiledAbove: 0 },
    );
    const ex = await expandFile(`${file}.rkf`, `${file}.png`);
    expect(ex.warnings).toBeUndefined();
    const m = pngMeta(await readFile(`${file}.png`));
    expect(m.ppm).toBeUndefined();
    expect(Buffer.compare(m.icc as Buffer, rgbIcc)).toBe(0);
  });

  it('a container that already stores 109092169 dpi (written before the check) expands with a warning, pixels intact', async () => {
    const src = await decodeImage(
      await (async () => {
        const f = join(dir, 'old.png');
        await writeFile(
          f,
          await encodeImageBuffer(
            { width: W, height: H, channels: 1, bitDepth: 8, planes: planesFor(1, 8) },
            { format: 'png' },
          ),
        );
        return f;
      })(),
    );
    // What an earlier version wrote: the density passed through unchecked.
    const old: DecodedImage = { ...src, meta: { ...src.meta, density: 109_092_169, orientation: 6 } };
    const { bytes } = await compressDecoded(old, { budget: { kind: 'rank', rank: 16 }, tile: 0 });
    const rkf = join(dir, 'old.rkf');
    await writeFile(rkf, bytes);
    for (const ext of ['png', 'tif']) {
      const out = join(dir, `old-out.${ext}`);
      const ex = await expandFile(rkf, out, { orientation: 'upright' });
      expect(ex.warnings).toEqual([
        `${rkf}: its stored resolution of 109092169 pixels per inch is outside the 0–1000000 pixels per inch that PNG and TIFF output can hold, so it was left out and the pixels were written`,
      ]);
      expect(ex.metadata.density).toBeUndefined();
      const back = await decodeImage(out);
      expect(back.sourceSha256).toBe(src.sourceSha256);
    }
  });
});
