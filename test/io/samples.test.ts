import { execFile } from 'node:child_process';
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeImage } from '../../src-main/node/image/decode';
import { repoRoot } from '../helpers/fixtures';

const run = promisify(execFile);
const samples = join(repoRoot, 'samples');

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-samples-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('samples/generate.mjs', () => {
  it('is deterministic: regenerating the smallest sample twice gives the same bytes and the committed pixels', async () => {
    const gen = join(samples, 'generate.mjs');
    await run(process.execPath, [gen, '--out', join(dir, 'a'), '--only', 'line-sensor-banding-truth']);
    await run(process.execPath, [gen, '--out', join(dir, 'b'), '--only', 'line-sensor-banding-truth']);
    const a = await readFile(join(dir, 'a', 'line-sensor-banding-truth.png'));
    const b = await readFile(join(dir, 'b', 'line-sensor-banding-truth.png'));
    expect(a.equals(b)).toBe(true);
    const fresh = await decodeImage(join(dir, 'a', 'line-sensor-banding-truth.png'));
    const committed = await decodeImage(join(samples, 'line-sensor-banding-truth.png'));
    // Pinned when the samples were committed (pixel SHA-256 as in docs/format.md).
    expect(committed.sourceSha256).toBe('03d140eb5dfb8df51b37a8345fa66f03c2bb811550b3f7e7533647932aecdc33');
    expect(fresh.sourceSha256).toBe(committed.sourceSha256);
  });

  it('the committed samples have the sizes, depths and pages that samples/SOURCES.md lists', async () => {
    const expected: [string, number, number, number, number, number?][] = [
      ['ledger-page.png', 1600, 2100, 1, 8],
      ['map-sheet.png', 2000, 1500, 3, 8],
      ['gel-scan.tif', 1200, 960, 1, 8, 2],
      ['film-plate-16bit.tif', 1200, 1500, 1, 16],
      ['line-sensor-banding.png', 1400, 1000, 1, 8],
      ['line-sensor-banding-truth.png', 1400, 1000, 1, 8],
      ['colour-slide.png', 1500, 1000, 3, 8],
    ];
    const sources = await readFile(join(samples, 'SOURCES.md'), 'utf8');
    for (const [name, w, h, ch, depth, pages] of expected) {
      const img = await decodeImage(join(samples, name), { page: pages ? pages - 1 : 0 });
      expect([name, img.width, img.height, img.channels, img.bitDepth, img.meta.pages]).toEqual([
        name,
        w,
        h,
        ch,
        depth,
        pages ?? 1,
      ]);
      expect(sources).toMatch(new RegExp(`\\| ${name.replace('.', '\\.')} +\\|`));
    }
    const plate = await decodeImage(join(samples, 'film-plate-16bit.tif'));
    expect(plate.planes[0].reduce((m, v) => Math.max(m, v), 0)).toBeGreaterThan(60000); // uses the 16-bit range
  });
});
