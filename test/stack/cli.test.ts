// Stack mode through the CLI and the service: folder and multi-page TIFF input, natural sort, --frames,
// budgets, per-frame hashes, expand of one frame / all frames, and refusal of mismatched frames.
import { createHash } from 'node:crypto';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp, { type SharpOptions } from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { driftingSpecimen, formPages } from '../../bench/models/synthetic';
import type { StackReport } from '../../src-main/contract';
import type { CliIO } from '../../src-main/node/cli/args/command';
import { main } from '../../src-main/node/cli/main';
import { compressStack, decodeStackFrame } from '../../src-main/node/services/stack';
import { naturalCompare } from '../../src-main/node/services/stack-series';

let dir: string;
const run = async (...argv: string[]) => {
  let out = '';
  let err = '';
  const io: CliIO = { stdout: (t) => (out += t), stderr: (t) => (err += t), isTTY: false };
  const code = await main(argv, io);
  return { code, out, err };
};

async function writeGray(file: string, plane: ArrayLike<number>, w: number, h: number, bitDepth: 8 | 16 = 8) {
  const data = bitDepth === 16 ? Uint16Array.from(plane) : Uint8Array.from(plane);
  await sharp(data, { raw: { width: w, height: h, channels: 1 } })
    .toColourspace(bitDepth === 16 ? 'grey16' : 'b-w')
    .png()
    .toFile(file);
}

/** Decode a PNG/TIFF page to gray samples with sharp 0.35 (an independent path from Rankfold's decoder). */
async function sharpGray(file: string, page = 0, bitDepth: 8 | 16 = 8): Promise<Uint8Array | Uint16Array> {
  const b = await sharp(file, { page })
    .toColourspace(bitDepth === 16 ? 'grey16' : 'b-w')
    .raw({ depth: bitDepth === 16 ? 'ushort' : 'uchar' })
    .toBuffer();
  return bitDepth === 16
    ? new Uint16Array(b.buffer, b.byteOffset, b.byteLength / 2).slice()
    : new Uint8Array(b);
}

function psnr(a: ArrayLike<number>, b: ArrayLike<number>, max: number) {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return 10 * Math.log10((max * max) / (s / a.length));
}

const form = formPages({ width: 64, height: 72, frames: 12, seed: 21 });

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'rankfold-stack-'));
  const frames = join(dir, 'forms');
  await import('node:fs/promises').then((fs) => fs.mkdir(frames));
  // Names chosen so that plain string order (page-1, page-10, page-11, page-12, page-2 …) differs from natural order.
  for (let j = 0; j < 12; j++) await writeGray(join(frames, `page-${j + 1}.png`), form.frames[j], 64, 72);
  writeFileSync(join(frames, 'notes.txt'), 'not an image');
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('compress --stack --help', () => {
  it('prints the stack help, not the single-image help', async () => {
    const { code, out } = await run('compress', '--stack', '--help');
    expect(code).toBe(0);
    expect(out.split('\n')[0]).toBe(
      'Usage: rankfold compress --stack IN_DIR|IN.tif -o OUT.rkf (--budget SIZE | --bpp X | --rank K | --min-psnr DB | --min-ssim S) [options]',
    );
    const single = await run('compress', '--help');
    expect(single.out.split('\n')[0]).toMatch(/^Usage: rankfold compress IN -o OUT\.rkf/);
  });
});

describe('compress --stack (folder)', () => {
  it('natural sort puts page-2 before page-10 (ECMA-402 numeric collation)', () => {
    expect(['page-10.png', 'page-2.png', 'page-1.png'].sort(naturalCompare)).toEqual([
      'page-1.png',
      'page-2.png',
      'page-10.png',
    ]);
  });

  it('meets a --bpp budget over the series, keeps per-frame source hashes, and reports spectrum and byte split', async () => {
    const out = join(dir, 'forms.rkf');
    const r = await run('compress', '--stack', join(dir, 'forms'), '-o', out, '--bpp', '1', '--json');
    expect(r.err).toMatch(/Caution: this output is lossy/);
    expect(r.code).toBe(0);
    const rep: StackReport = JSON.parse(r.out);
    const onDisk = readFileSync(out).length;
    expect(rep.outputBytes).toBe(onDisk);
    expect(onDisk).toBeLessThanOrEqual((1 * 64 * 72 * 12) / 8);
    expect(rep.perFrame.map((f) => f.name)).toEqual(
      Array.from({ length: 12 }, (_, j) => `page-${j + 1}.png`),
    );
    // Source hash: SHA-256 of the 8-bit samples (docs/format.md), recomputed here with node:crypto.
    const h7 = createHash('sha256')
      .update(Buffer.from(Uint8Array.from(form.frames[7])))
      .digest('hex');
    expect(rep.perFrame[7].sourceSha256).toBe(h7);
    expect(rep.spectrum[0].sigma.length).toBe(12);
    expect(rep.bytes.basis + rep.bytes.coefficients + rep.bytes.residuals + rep.bytes.overhead).toBe(onDisk);
    // PSNR as reported equals PSNR re-measured from an independent decode of the expanded frame.
    const png = join(dir, 'f7.png');
    // --frame counts from 1: frame 8 is perFrame[7].
    expect((await run('expand', out, '--frame', '8', '-o', png)).code).toBe(0);
    const got = await sharpGray(png);
    expect(psnr(form.frames[7], got, 255)).toBeCloseTo(rep.perFrame[7].psnr, 6);
  });

  it('--frames GLOB selects frames', async () => {
    const out = join(dir, 'sub.rkf');
    const r = await run(
      'compress',
      '--stack',
      join(dir, 'forms'),
      '-o',
      out,
      '--frames',
      'page-1?.png',
      '--bpp',
      '1',
      '--json',
    );
    expect(r.code).toBe(0);
    expect((JSON.parse(r.out) as StackReport).perFrame.map((f) => f.name)).toEqual([
      'page-10.png',
      'page-11.png',
      'page-12.png',
    ]);
  });

  it('expand --frame I equals frame I of a full expand (multi-page TIFF and folder), bit for bit', async () => {
    const out = join(dir, 'forms.rkf');
    const tif = join(dir, 'all.tif');
    const folder = join(dir, 'all');
    expect((await run('expand', out, '-o', tif)).code).toBe(0);
    expect((await run('expand', out, '-o', folder)).code).toBe(0);
    const meta = await sharp(tif).metadata();
    expect(meta.pages).toBe(12);
    const one = join(dir, 'f4.png');
    expect((await run('expand', out, '--frame', '5', '-o', one)).code).toBe(0);
    const a = await sharpGray(one);
    expect(Buffer.from(await sharpGray(tif, 4)).equals(Buffer.from(a))).toBe(true);
    expect(Buffer.from(await sharpGray(join(folder, 'frame-005.png'))).equals(Buffer.from(a))).toBe(true);
    // …and equals the in-memory service decode.
    const mem = decodeStackFrame(new Uint8Array(readFileSync(out)), 4);
    expect(Buffer.from(Uint8Array.from(mem[0])).equals(Buffer.from(a))).toBe(true);
  });

  it('expand refuses a damaged stack file, naming it, and writes nothing', async () => {
    const good = readFileSync(join(dir, 'forms.rkf'));
    const bad = Buffer.from(good);
    bad[Math.floor(bad.length * 0.6)] ^= 0x5a;
    const file = join(dir, 'damaged-copy.rkf');
    writeFileSync(file, bad);
    for (const target of [join(dir, 'damaged-out'), join(dir, 'damaged-out.tif')]) {
      const r = await run('expand', file, '-o', target);
      expect(r.code).toBe(1);
      // Container 1.4 (compact framing): one CRC-32 over the whole file (docs/format.md).
      expect(r.err).toMatch(
        /damaged-copy\.rkf: is truncated or damaged: the CRC-32 at the end of the file does not match/,
      );
      expect(existsSync(target)).toBe(false);
    }
  });

  it('expand names the damage, not the output, when the damage hides the stack layout or the output exists', async () => {
    const good = readFileSync(join(dir, 'forms.rkf'));
    const cases: Array<[string, (b: Buffer) => void, RegExp]> = [
      ['file CRC', (b) => (b[b.length - 3] ^= 1), /the CRC-32 at the end of the file does not match/],
      ['header', (b) => (b[20] ^= 4), /the CRC-32 at the end of the file does not match/],
      ['version', (b) => (b[11] ^= 2), /the CRC-32 at the end of the file does not match/],
      [
        'appended copy',
        (b) => b.set(good, good.length),
        /has \d+ unexpected bytes after the end of its container/,
      ],
    ];
    for (const [what, damage, message] of cases) {
      const bad = Buffer.alloc(what === 'appended copy' ? 2 * good.length : good.length);
      good.copy(bad);
      damage(bad);
      const file = join(dir, `hidden-${what.replace(' ', '-')}.rkf`);
      writeFileSync(file, bad);
      const target = join(dir, `hidden-out-${what.replace(' ', '-')}`);
      const r = await run('expand', file, '-o', target);
      expect(r.code, what).toBe(1);
      expect(r.err, what).toContain(`${file}: `);
      expect(r.err, what).toMatch(message);
      expect(existsSync(target), what).toBe(false);
    }
    // A chunk damaged while the output already exists: the damage is reported, the output left alone.
    const bad = Buffer.from(good);
    bad[Math.floor(bad.length * 0.6)] ^= 0x5a;
    const file = join(dir, 'damaged-existing.rkf');
    writeFileSync(file, bad);
    const existing = join(dir, 'existing.tif');
    writeFileSync(existing, 'keep');
    const r = await run('expand', file, '-o', existing);
    expect(r.err).toMatch(
      /damaged-existing\.rkf: is truncated or damaged: the CRC-32 at the end of the file does not match/,
    );
    expect(readFileSync(existing, 'utf8')).toBe('keep');
  });

  it('refuses a frame of another size, naming the file, and writes nothing', async () => {
    const bad = join(dir, 'bad-size');
    await import('node:fs/promises').then((fs) => fs.mkdir(bad));
    for (let j = 0; j < 4; j++) await writeGray(join(bad, `f${j}.png`), form.frames[j], 64, 72);
    await writeGray(join(bad, 'f2b.png'), form.frames[0].subarray(0, 64 * 70), 64, 70);
    const out = join(dir, 'bad.rkf');
    const r = await run('compress', '--stack', bad, '-o', out, '--bpp', '1');
    expect(r.code).toBe(1);
    expect(r.err).toMatch(
      /f2b\.png: is 64×70 but the first frame \(.*f0\.png\) is 64×72; every frame of a stack must have the same size/,
    );
    expect(existsSync(out)).toBe(false);
  });

  it('refuses a frame of another bit depth, naming the file, and writes nothing', async () => {
    const bad = join(dir, 'bad-depth');
    await import('node:fs/promises').then((fs) => fs.mkdir(bad));
    for (let j = 0; j < 3; j++) await writeGray(join(bad, `f${j}.png`), form.frames[j], 64, 72);
    await writeGray(
      join(bad, 'f3.png'),
      form.frames[3].map((v) => v * 257),
      64,
      72,
      16,
    );
    const out = join(dir, 'bad16.rkf');
    const r = await run('compress', '--stack', bad, '-o', out, '--bpp', '1');
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/f3\.png: is 16-bit but the first frame .* is 8-bit/);
    expect(existsSync(out)).toBe(false);
  });

  it('never overwrites an existing output without --force', async () => {
    const out = join(dir, 'forms.rkf');
    const before = readFileSync(out);
    const r = await run('compress', '--stack', join(dir, 'forms'), '-o', out, '--bpp', '0.5');
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/already exists; pass --force/);
    expect(readFileSync(out).equals(before)).toBe(true);
  });
});

describe('compress --stack (multi-page 16-bit TIFF) with a per-frame PSNR floor', () => {
  it('the worst frame meets --min-psnr, re-measured on an independent decode of the expanded TIFF', async () => {
    const s = driftingSpecimen({ width: 56, height: 48, frames: 10, seed: 4, noise: 1.5, bitDepth: 16 });
    const tall = new Uint16Array(56 * 48 * 10);
    s.frames.forEach((f, j) => {
      tall.set(f, j * 56 * 48);
    });
    const tif = join(dir, 'series16.tif');
    await sharp(tall, {
      raw: { width: 56, height: 48 * 10, channels: 1, pageHeight: 48 },
    } as SharpOptions)
      .toColourspace('grey16')
      .tiff({ compression: 'deflate' })
      .toFile(tif);
    const out = join(dir, 'series16.rkf');
    const r = await run('compress', '--stack', tif, '-o', out, '--min-psnr', '50', '--json');
    expect(r.code).toBe(0);
    const rep: StackReport = JSON.parse(r.out);
    expect(rep.bitDepth).toBe(16);
    expect(rep.perFrame[3].name).toBe('series16.tif#3');
    const back = join(dir, 'series16-out.tif');
    expect((await run('expand', out, '-o', back)).code).toBe(0);
    for (let j = 0; j < 10; j++)
      expect(psnr(s.frames[j], await sharpGray(back, j, 16), 65535)).toBeGreaterThanOrEqual(50);
  });
});

describe('compress --stack (colour folder)', () => {
  it('codes RGB frames and expands one frame as RGB within a few grey levels', async () => {
    const col = join(dir, 'colour');
    await import('node:fs/promises').then((fs) => fs.mkdir(col));
    const s = driftingSpecimen({ width: 40, height: 32, frames: 6, seed: 12, noise: 1 });
    for (let j = 0; j < 6; j++) {
      const rgb = new Uint8Array(40 * 32 * 3);
      for (let p = 0; p < 40 * 32; p++) {
        const v = s.frames[j][p];
        rgb[3 * p] = v;
        rgb[3 * p + 1] = Math.round(v * 0.7);
        rgb[3 * p + 2] = 255 - v;
      }
      await sharp(rgb, { raw: { width: 40, height: 32, channels: 3 } })
        .png()
        .toFile(join(col, `c${j}.png`));
    }
    const out = join(dir, 'colour.rkf');
    const r = await run('compress', '--stack', col, '-o', out, '--min-psnr', '40', '--json');
    expect(r.code).toBe(0);
    const rep: StackReport = JSON.parse(r.out);
    expect(rep.channels).toBe(3);
    expect(rep.spectrum.map((x) => x.channel)).toEqual(['Y', 'Cb', 'Cr']);
    const png = join(dir, 'c2-out.png');
    expect((await run('expand', out, '--frame', '3', '-o', png)).code).toBe(0);
    const { data, info } = await sharp(png).raw().toBuffer({ resolveWithObject: true });
    expect(info.channels).toBe(3);
    const src = await sharp(join(col, 'c2.png')).raw().toBuffer();
    expect(psnr(src, data, 255)).toBeGreaterThanOrEqual(40);
  });
});

describe('in-memory service API', () => {
  it('compressStack / decodeStackFrame round-trip and refuse a mismatched frame naming it', () => {
    const frames = form.frames.slice(0, 6).map((p, j) => ({
      width: 64,
      height: 72,
      bitDepth: 8 as const,
      channels: 1,
      planes: [p],
      name: `p${j}`,
    }));
    const { bytes, report } = compressStack(frames, { budget: { kind: 'bpp', bpp: 1 } });
    expect(bytes.length).toBe(report.outputBytes);
    expect(decodeStackFrame(bytes, 2)[0].length).toBe(64 * 72);
    const bad = [...frames, { ...frames[0], width: 72, height: 64, name: 'rotated-page' }];
    expect(() => compressStack(bad, { budget: { kind: 'bpp', bpp: 1 } })).toThrow(/rotated-page: is 72×64/);
    const mixed = [
      ...frames,
      {
        ...frames[0],
        channels: 3,
        planes: [frames[0].planes[0], frames[0].planes[0], frames[0].planes[0]],
        name: 'colour-page',
      },
    ];
    expect(() => compressStack(mixed, { budget: { kind: 'bpp', bpp: 1 } })).toThrow(
      /colour-page: is colour but the first frame \(p0\) is gray/,
    );
  });
});
