// A file that is not an image at all (a text file, a GIF) is refused with the kind 'not-an-image', so a batch
// lists it as skipped with the reason; a damaged scan keeps failing.
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toErrorPayload } from '../../src-main/contract';
import { outcomeRow } from '../../src-main/node/batch/rows';
import { decodeImage } from '../../src-main/node/image/decode';
import { isNotAnImage } from '../../src-main/node/image/refusals';
import { writePage } from './images';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rankfold-not-image-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** The payload of the error decoding `file` throws (as the batch worker sends it). */
async function refusalOf(file: string) {
  try {
    await decodeImage(file);
  } catch (err) {
    return toErrorPayload(err);
  }
  throw new Error(`${file} decoded`);
}

const planned = (path: string) => ({
  path,
  output: `${path}.rkf`,
  inputAbs: path,
  outputAbs: `${path}.rkf`,
  size: 9,
});

describe("refusal kind 'not-an-image'", () => {
  it('marks a text file and a GIF, and the batch row is skipped with the reason', async () => {
    const text = join(dir, 'box-list.png');
    await writeFile(text, 'box list, shelf 4\n');
    const gif = join(dir, 'icon.gif');
    await sharp(Buffer.alloc(16, 90), { raw: { width: 4, height: 4, channels: 1 } })
      .gif()
      .toFile(gif);
    for (const f of [text, gif]) {
      const e = await refusalOf(f);
      expect(isNotAnImage(e), e.message).toBe(true);
      const row = outcomeRow(planned(f), '0/1', e);
      expect(row.status).toBe('skipped');
      expect(row.note).toBe(e.message);
    }
  });

  it('does not mark a damaged PNG: it fails', async () => {
    const page = join(dir, 'page.png');
    await writePage(page, 64, 48, 3);
    const cut = join(dir, 'cut.png');
    const bytes = await readFile(page);
    await writeFile(cut, bytes.subarray(0, bytes.length >> 1));
    const e = await refusalOf(cut);
    expect(e.message).toMatch(/starts as a PNG file but the rest is truncated or corrupt/);
    expect(isNotAnImage(e)).toBe(false);
    expect(outcomeRow(planned(cut), '0/1', e).status).toBe('failed');
  });
});
