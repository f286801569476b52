// The survey of a scan above 2^25 pixels measures base-only files, as its real encode writes (the tiled encoder
// and RESIDUAL_MAX_PIXELS: no residual layer above 2^25 pixels), and reads only its crops.
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RESIDUAL_MAX_PIXELS } from '../../src-main/engine/codec/image-file';
import { TILED_PIXELS } from '../../src-main/engine/lowrank/tiled';
import { runSurveyJob, surveyLayers } from '../../src-main/node/batch/survey-job';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-survey-large-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('survey above 2^25 pixels', () => {
  it('the large-scan encoder and the residual layer share one threshold, 2^25 pixels', () => {
    expect(RESIDUAL_MAX_PIXELS).toBe(2 ** 25);
    expect(TILED_PIXELS).toBe(RESIDUAL_MAX_PIXELS);
  });

  it('measures two layers up to 2^25 pixels and the base only above', () => {
    expect(surveyLayers(2 ** 25, 'auto')).toBe('auto');
    expect(surveyLayers(2 ** 25, undefined)).toBeUndefined();
    expect(surveyLayers(2 ** 25 + 1, 'auto')).toBe('base');
    expect(surveyLayers(2 ** 25 + 1, undefined)).toBe('base');
    expect(surveyLayers(100, 'base')).toBe('base');
  });

  it('a 5793×5793 scan (2^25 + 4417 pixels) is surveyed base-only from its crops', async () => {
    const side = 5793;
    expect(side * side).toBeGreaterThan(2 ** 25);
    const file = join(dir, 'large.tif');
    // A tiled TIFF, so the band reads of the mosaic do not decode the whole scan.
    await sharp({
      create: { width: side, height: side, channels: 3, background: { r: 200, g: 200, b: 200 } },
    })
      .composite([
        {
          input: { create: { width: 900, height: 900, channels: 3, background: { r: 40, g: 40, b: 40 } } },
          left: 2000,
          top: 2000,
        },
      ])
      .removeAlpha()
      .toColourspace('b-w')
      .tiff({ tile: true, tileWidth: 256, tileHeight: 256, compression: 'deflate' })
      .toFile(file);
    const r = await runSurveyJob({
      kind: 'survey',
      input: file,
      options: { budget: { kind: 'percent', percent: 100 }, tile: 'auto' },
    });
    expect([r.width, r.height, r.channels, r.bitDepth]).toEqual([side, side, 1, 8]);
    expect(r.rawBytes).toBe(side * side);
    expect(r.method).toBe('trial-encodes/3 base-only');
    expect(r.points.length).toBeGreaterThan(0);
  }, 120_000);
});
