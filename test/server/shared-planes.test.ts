/**
 * A scan session decodes its scan once and shares the planes (SharedArrayBuffer) with the threads that
 * replace it after a cancel and with the background factorisation (src-main/node/server/session-ops.ts
 * `sharedImage`). That is only safe if no session job writes into the planes: every job the page can run
 * is run here on one shared image, and the samples must be bit-for-bit those decoded. The figures of a job
 * on the shared planes must also equal those on the file's own planes (same encoder, same input).
 */
import { createHash } from 'node:crypto';
import { afterAll, describe, expect, it } from 'vitest';
import type { DecodedImage, EvaluateResult } from '../../src-main/contract';
import { decodeImage } from '../../src-main/node/image/decode';
import { runSessionOp, sharedImage } from '../../src-main/node/server/session-ops';
import { image } from '../helpers/fixtures';

const hashPlanes = (img: DecodedImage) => {
  const h = createHash('sha256');
  for (const p of img.planes) h.update(new Uint8Array(p.buffer, p.byteOffset, p.byteLength));
  return h.digest('hex');
};
const quiet = () => undefined;

let state: { image?: DecodedImage } = {};
afterAll(() => {
  state = {};
});

describe('shared planes of a scan session', () => {
  it('live in shared memory and equal the decoded samples', async () => {
    const decoded = await decodeImage(image('camera.png'));
    const shared = sharedImage(decoded);
    expect(shared.planes.every((p) => p.buffer instanceof SharedArrayBuffer)).toBe(true);
    expect(hashPlanes(shared)).toBe(hashPlanes(decoded));
    const adopted = await runSessionOp(state, 'adopt', { image: shared }, quiet);
    expect(adopted.value).toMatchObject({ width: decoded.width, height: decoded.height, channels: 1 });
  });

  it('are never written by factors, evaluate, clean or save', async () => {
    const img = state.image as DecodedImage;
    const before = hashPlanes(img);
    await runSessionOp(state, 'factors', { maxRank: 20, powerIters: 1 }, quiet);
    const shared = (await runSessionOp(
      state,
      'evaluate',
      { budget: { kind: 'bpp', bpp: 0.5 }, tile: 0, input: 'camera.png' },
      quiet,
    )) as { value: EvaluateResult };
    await runSessionOp(state, 'evaluate', { budget: { kind: 'psnr', db: 30 }, tile: 64, input: 'x' }, quiet);
    await runSessionOp(state, 'clean', { settings: { noise: 'auto', banding: 'auto' } }, quiet);
    await runSessionOp(
      state,
      'save',
      { kind: 'expanded', budget: { kind: 'rank', rank: 12 }, tile: 0, input: 'camera.png' },
      quiet,
    );
    expect(hashPlanes(img)).toBe(before);
    // The same evaluation on the file's own (unshared) planes: the same file, byte for byte.
    const own = (await runSessionOp(
      { image: await decodeImage(image('camera.png')) },
      'evaluate',
      { budget: { kind: 'bpp', bpp: 0.5 }, tile: 0, input: 'camera.png' },
      quiet,
    )) as { value: EvaluateResult };
    expect(shared.value.report.outputBytes).toBe(own.value.report.outputBytes);
    expect(shared.value.report.psnr).toBe(own.value.report.psnr);
  }, 120_000);
});
