// `rankfold expand` through the CLI entry: output, JSON, damaged input, refusal to overwrite.
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src-main/node/cli/main';
import { image } from '../helpers/fixtures';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-cli-e-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const rkf = join(dir, 'page.rkf');

async function run(...argv: string[]) {
  let stdout = '';
  let stderr = '';
  const code = await main(argv, { stdout: (t) => (stdout += t), stderr: (t) => (stderr += t), isTTY: false });
  return { code, stdout, stderr };
}

beforeAll(async () => {
  expect((await run('compress', image('page.png'), '-o', rkf, '--bpp', '1', '--tile', '32')).code).toBe(0);
});

describe('rankfold expand', () => {
  it('writes PNG and TIFF at the source size and depth', async () => {
    const png = join(dir, 'a.png');
    const r = await run('expand', rkf, '-o', png, '--json');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j).toMatchObject({
      width: 384,
      height: 191,
      channels: 1,
      bitDepth: 8,
      format: 'png',
      lossless: false,
      hashChecked: false,
    });
    const m = await sharp(png).metadata();
    expect([m.width, m.height, m.depth]).toEqual([384, 191, 'uchar']);
    const tif = join(dir, 'a.tif');
    expect((await run('expand', rkf, '-o', tif)).code).toBe(0);
    expect((await sharp(tif).metadata()).format).toBe('tiff');
  });

  it('fails cleanly on a damaged file and writes nothing', async () => {
    const bad = join(dir, 'bad.rkf');
    const b = readFileSync(rkf);
    b[Math.floor(b.length / 2)] ^= 0x40;
    writeFileSync(bad, b);
    const out = join(dir, 'bad.png');
    const r = await run('expand', bad, '-o', out);
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(bad);
    expect(r.stderr).toMatch(/damaged|CRC/);
    expect(() => statSync(out)).toThrow();
  });

  it('refuses an unknown extension and an existing output', async () => {
    expect((await run('expand', rkf, '-o', join(dir, 'x.jpg'))).stderr).toMatch(/use \.png, \.tif or \.tiff/);
    const out = join(dir, 'exists.png');
    writeFileSync(out, 'x');
    expect((await run('expand', rkf, '-o', out)).stderr).toMatch(/already exists/);
    expect(readFileSync(out, 'utf8')).toBe('x');
  });

  it('delegates --frame to the stack reader', async () => {
    const r = await run('expand', rkf, '--frame', '1', '-o', join(dir, 'f.png'));
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/stack|frame/);
  });
});
