// `rankfold clean` and the clean service end to end: files, bit depth, refusals, removed part, profile CSV,
// JSON report, worker-count independence. Workers run from the built dist/workers/clean.js (`npm test`
// builds first).
import { createHash } from 'node:crypto';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CLEANING_CAUTION } from '../../src-main/node/cli/args/command';
import { main } from '../../src-main/node/cli/main';
import { decodeImage } from '../../src-main/node/image/decode';
import { cleanDecoded, cleanFile } from '../../src-main/node/services/clean';
import { image } from '../helpers/fixtures';
import { damage, fixtureGray, psnr, randomProfile } from './helpers';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-clean-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const noisyPng = join(dir, 'noisy.png');
const cleanPng = join(dir, 'clean-source.png');
const noisyTif = join(dir, 'noisy16.tif');
let truth: Awaited<ReturnType<typeof fixtureGray>>;
let truth16: Float32Array;

async function run(...argv: string[]) {
  let stdout = '';
  let stderr = '';
  const code = await main(argv, { stdout: (t) => (stdout += t), stderr: (t) => (stderr += t), isTTY: false });
  return { code, stdout, stderr };
}
const sha = (f: string) => createHash('sha256').update(readFileSync(f)).digest('hex');

beforeAll(async () => {
  truth = await fixtureGray('moon.png', { x: 150, y: 150, w: 160, h: 160 });
  const noisy = damage(truth, { sigma: 10, seed: 1, columns: randomProfile(160, 6, 2) });
  await sharp(Buffer.from(Uint8Array.from(noisy)), { raw: { width: 160, height: 160, channels: 1 } })
    .toColourspace('b-w')
    .png()
    .toFile(noisyPng);
  await sharp(Buffer.from(Uint8Array.from(truth.data)), { raw: { width: 160, height: 160, channels: 1 } })
    .toColourspace('b-w')
    .png()
    .toFile(cleanPng);
  const d16 = await decodeImage(image('chessboard_GRAY_U16.tif'));
  truth16 = d16.planes[0];
  const n16 = damage(
    { width: d16.width, height: d16.height, data: truth16 },
    { sigma: 10 * 257, seed: 3, max: 65535 },
  );
  await sharp(Buffer.from(Uint16Array.from(n16).buffer), {
    raw: { width: d16.width, height: d16.height, channels: 1 },
  })
    .toColourspace('grey16')
    .tiff({ compression: 'deflate' })
    .toFile(noisyTif);
});

describe('rankfold clean (CLI)', () => {
  it('help carries the cleaning caution and every option of the issue', async () => {
    const r = await run('clean', '--help');
    expect(r.code).toBe(0);
    expect(r.stdout).toContain(CLEANING_CAUTION);
    for (const o of [
      '--noise auto|off|SIGMA',
      '--banding auto|rows|columns|both|off',
      '--rank K',
      '--removed',
      '--profile',
      '--json',
      '--force',
    ])
      expect(r.stdout).toContain(o);
  });

  it('--json reports noiseSigma, threshold, rank, banding and psnrChange; OUT keeps 8-bit gray; IN untouched', async () => {
    const before = sha(noisyPng);
    const out = join(dir, 'out.png');
    const removed = join(dir, 'removed.png');
    const profile = join(dir, 'profile.csv');
    const r = await run('clean', noisyPng, '-o', out, '--removed', removed, '--profile', profile, '--json');
    expect(r.code).toBe(0);
    expect(r.stderr).toContain(CLEANING_CAUTION);
    const j = JSON.parse(r.stdout);
    expect(Math.abs(j.noiseSigma / 10 - 1)).toBeLessThan(0.15);
    expect(j.threshold).toBeGreaterThan(0);
    expect(j.rank.groups).toBeGreaterThan(0);
    expect(j.banding.direction).toBe('columns');
    expect(Math.abs(j.banding.strength / 6 - 1)).toBeLessThan(0.2);
    expect(j.banding).toHaveProperty('period');
    expect(sha(noisyPng)).toBe(before);
    const o = await decodeImage(out);
    const i = await decodeImage(noisyPng);
    expect([o.bitDepth, o.channels, o.width, o.height]).toEqual([8, 1, 160, 160]);
    // psnrChange is PSNR(OUT, IN) (recomputed here with the textbook formula).
    expect(j.psnrChange).toBeCloseTo(psnr(o.planes[0], i.planes[0]), 6);
    // Cleaning helps against the truth: noise σ 10 + stripes RMS 6 → at least +4 dB.
    expect(psnr(o.planes[0], truth.data)).toBeGreaterThan(psnr(i.planes[0], truth.data) + 4);
    // The removed part: mid-grey offset, scale stated in the report and in a PNG tEXt "Comment" chunk.
    const png = readFileSync(removed);
    expect(png.includes(Buffer.from('tEXtComment\0Rankfold removed part: grey = 128 + '))).toBe(true);
    expect(j.removedScale).toBeGreaterThan(0);
    const rem = await decodeImage(removed);
    const expected = i.planes[0].map((v, k) =>
      Math.max(0, Math.min(255, Math.round(128 + j.removedScale * (v - o.planes[0][k])))),
    );
    expect(Buffer.from(Uint8Array.from(rem.planes[0])).equals(Buffer.from(Uint8Array.from(expected)))).toBe(
      true,
    );
    const csv = readFileSync(profile, 'utf8').trim().split('\n');
    expect(csv[0]).toBe('axis,index,gray');
    expect(csv.filter((l) => l.startsWith('column,')).length).toBe(160);
  });

  it('never overwrites without --force, and never writes over its input', async () => {
    const out = join(dir, 'exists.png');
    expect((await run('clean', noisyPng, '-o', out)).code).toBe(0);
    const first = sha(out);
    const r = await run('clean', noisyPng, '-o', out, '--noise', '3');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(`${out}: already exists; pass --force to overwrite it`);
    expect(sha(out)).toBe(first);
    expect((await run('clean', noisyPng, '-o', out, '--noise', '3', '--force')).code).toBe(0);
    expect(sha(out)).not.toBe(first);
    const self = await run('clean', noisyPng, '-o', noisyPng, '--force');
    expect(self.code).toBe(1);
    expect(self.stderr).toContain('never overwrites its input');
  });

  it('a clean image with --noise off and --banding auto comes back bit-identical', async () => {
    const out = join(dir, 'untouched.png');
    const r = await run('clean', cleanPng, '-o', out, '--noise', 'off', '--json');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.banding.direction).toBe('none');
    expect(j.psnrChange).toBeNull();
    expect(j.changedSamples).toBe(0);
  });

  it('16-bit TIFF stays 16-bit and gains at σ = 10·257', async () => {
    const out = join(dir, 'out16.tif');
    const r = await run('clean', noisyTif, '-o', out, '--banding', 'off', '--json');
    expect(r.code).toBe(0);
    const o = await decodeImage(out);
    const i = await decodeImage(noisyTif);
    expect(o.bitDepth).toBe(16);
    expect(psnr(o.planes[0], truth16, 65535)).toBeGreaterThan(psnr(i.planes[0], truth16, 65535) + 3);
  });

  it('bad input and bad options get clear messages naming the problem', async () => {
    const missing = join(dir, 'nope.png');
    const r1 = await run('clean', missing, '-o', join(dir, 'x.png'));
    expect(r1.code).toBe(1);
    expect(r1.stderr).toContain(`${missing}: no such file`);
    const r2 = await run('clean', noisyPng, '-o', join(dir, 'y.png'), '--noise', 'loud');
    expect(r2.stderr).toContain(
      'Expected auto, off or a noise σ above 0 in grey levels (e.g. 8) for noise but received "loud"',
    );
    const r3 = await run('clean', noisyPng, '-o', join(dir, 'z.png'), '--banding', 'diagonal');
    expect(r3.stderr).toContain(
      'Expected one of auto, rows, columns, both, off for banding but received "diagonal" of type string',
    );
    expect(existsSync(join(dir, 'y.png')) || existsSync(join(dir, 'z.png'))).toBe(false);
    const r4 = await run('clean', noisyPng, '-o', join(dir, 'w.png'), '--removed', join(dir, 'removed.tif'));
    expect(r4.code).toBe(1);
    expect(r4.stderr).toContain('the removed part is written as PNG');
    expect(existsSync(join(dir, 'w.png'))).toBe(false);
  });
});

describe('clean service', () => {
  it('0, 1 and 2 workers give bit-identical output', async () => {
    const outs: Buffer[] = [];
    for (const workers of [0, 1, 2]) {
      const f = join(dir, `w${workers}.png`);
      await cleanFile(noisyPng, f, { noise: 'auto', banding: 'auto', workers });
      outs.push(Buffer.from(Uint8Array.from((await decodeImage(f)).planes[0])));
    }
    expect(outs[1].equals(outs[0])).toBe(true);
    expect(outs[2].equals(outs[0])).toBe(true);
  });

  it('cleanDecoded returns planes, removed part, report and profile in memory; fixed rank is honoured', async () => {
    const d = await decodeImage(noisyPng);
    const r = await cleanDecoded(d, { noise: 10, banding: 'columns', rank: 1, workers: 0 });
    expect(r.planes).toHaveLength(1);
    expect(r.removed[0][0]).toBe(d.planes[0][0] - r.planes[0][0]);
    expect(r.report.rank?.fixed).toBe(1);
    expect(r.report.rank?.max).toBe(1);
    expect(r.report.noiseSource).toBe('given');
    expect(r.profile.columns?.[0]).toHaveLength(160);
  });

  it('an aborted signal stops the job with CancelledError', async () => {
    const ac = new AbortController();
    ac.abort();
    await expect(
      cleanFile(noisyPng, join(dir, 'cancel.png'), { noise: 'auto', banding: 'off' }, { signal: ac.signal }),
    ).rejects.toThrow('cleaning was cancelled');
    expect(existsSync(join(dir, 'cancel.png'))).toBe(false);
  });
});
