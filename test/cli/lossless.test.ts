// `rankfold compress --lossless` and the lossless file chosen under a budget, through the CLI entry: exact
// round trips (16-bit TIFF, colour), the budget met on disk, and damaged lossless files refused.
import { existsSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src-main/node/cli/main';
import { image, repoRoot } from '../helpers/fixtures';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-cli-l-'));
/** The bench's grey rendering of the Shepp–Logan phantom (libvips `b-w`, as in bench/ single-scan). */
const phantom = join(dir, 'phantom-grey.png');
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Run the CLI in this process, its two streams gathered as text. */
async function run(...argv: string[]) {
  const out: string[] = [];
  const err: string[] = [];
  const code = await main(argv, { stdout: (t) => out.push(t), stderr: (t) => err.push(t), isTTY: false });
  return { code, stdout: out.join(''), stderr: err.join('') };
}

/** Raw samples of an image file as sharp decodes them (16-bit kept). */
async function samples(file: string, depth: 'uchar' | 'ushort'): Promise<Buffer> {
  return sharp(file).raw({ depth }).toBuffer();
}

beforeAll(async () => {
  await sharp(image('phantom.png')).toColourspace('b-w').png().toFile(phantom);
});

describe('compress --lossless', () => {
  it('round-trips a 16-bit grey TIFF exactly, and expand checks the stored SHA-256', async () => {
    const rkf = join(dir, 'chess.rkf');
    const c = await run('compress', image('chessboard_GRAY_U16.tif'), '-o', rkf, '--lossless', '--json');
    expect(c.code).toBe(0);
    const report = JSON.parse(c.stdout);
    expect(report).toMatchObject({ lossless: true, bitDepth: 16, layers: { chosen: 'lossless' } });
    expect(report.layers.losslessBytes).toBeLessThan(report.outputBytes);
    expect(c.stderr).not.toMatch(/Caution/);
    const tif = join(dir, 'chess.tif');
    const e = await run('expand', rkf, '-o', tif, '--json');
    expect(e.code).toBe(0);
    expect(JSON.parse(e.stdout)).toMatchObject({ lossless: true, hashChecked: true, bitDepth: 16 });
    expect(
      (await samples(tif, 'ushort')).equals(await samples(image('chessboard_GRAY_U16.tif'), 'ushort')),
    ).toBe(true);
  });

  it('round-trips a colour scan exactly', async () => {
    const src = join(repoRoot, 'samples', 'colour-slide.png');
    const crop = join(dir, 'slide.png');
    await sharp(src).extract({ left: 300, top: 200, width: 160, height: 120 }).png().toFile(crop);
    const rkf = join(dir, 'slide.rkf');
    expect((await run('compress', crop, '-o', rkf, '--lossless')).code).toBe(0);
    const png = join(dir, 'slide-out.png');
    expect((await run('expand', rkf, '-o', png)).code).toBe(0);
    expect((await samples(png, 'uchar')).equals(await samples(crop, 'uchar'))).toBe(true);
  });

  it('refuses a budget the lossless file does not fit, and writes nothing', async () => {
    const rkf = join(dir, 'small.rkf');
    const r = await run('compress', image('camera.png'), '-o', rkf, '--lossless', '--budget', '20kB');
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/over the budget of 20000; nothing was written/);
    expect(existsSync(rkf)).toBe(false);
  });
});

describe('the lossless file under a byte budget', () => {
  it('phantom (grey) at 0.1 bpp: lossless, within 2000 bytes on disk (AVIF needs 1515 B for the same)', async () => {
    // AVIF figure: docs/bench/single-scan.md (sharp avif, effort 6, identical samples), measured by the bench.
    const rkf = join(dir, 'phantom.rkf');
    const r = await run('compress', phantom, '-o', rkf, '--bpp', '0.1', '--json');
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout);
    expect(report.lossless).toBe(true);
    expect(statSync(rkf).size).toBe(report.outputBytes);
    expect(report.outputBytes).toBeLessThanOrEqual(2000);
    const png = join(dir, 'phantom-out.png');
    const e = await run('expand', rkf, '-o', png, '--json');
    expect(JSON.parse(e.stdout)).toMatchObject({ lossless: true, hashChecked: true });
  });

  it('a photograph at 0.5 bpp stays lossy', async () => {
    const rkf = join(dir, 'camera.rkf');
    const r = await run('compress', image('camera.png'), '-o', rkf, '--bpp', '0.5', '--json');
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stdout).lossless).toBe(false);
  });

  it('a damaged lossless file is refused and nothing is written', async () => {
    const good = readFileSync(join(dir, 'phantom.rkf'));
    // The header, the middle of the coded plane and its last bytes, where the coder's end check also looks.
    for (const at of [16, good.length >> 1, good.length - 8]) {
      const bad = join(dir, `bad-${at}.rkf`);
      writeFileSync(
        bad,
        good.map((v, i) => (i === at ? v ^ 0x04 : v)),
      );
      const out = join(dir, `bad-${at}.png`);
      const { code, stderr } = await run('expand', bad, '-o', out);
      expect([code, stderr.includes(bad), /damaged|CRC/.test(stderr), existsSync(out)]).toEqual([
        1,
        true,
        true,
        false,
      ]);
    }
  });
});
