// EncodeOptions.factors (engine/lowrank/given-factors.ts): an encode with factors the caller already has
// writes the file it would have written after factoring, and uses no component beyond them.
import { describe, expect, it } from 'vitest';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { factorPlane, type PlaneFactors } from '../../src-main/engine/lowrank/factorise';
import { fittingFactors, givenPlaneFactors } from '../../src-main/engine/lowrank/given-factors';
import { decodeImage } from '../../src-main/node/image/decode';
import { image } from '../helpers/fixtures';

/** The session layout of a whole-plane factorisation: σ and vectors contiguous (k×height, k×width). */
function sessionLayout(f: PlaneFactors, k: number) {
  const t = f.tiles[0];
  const ut = new Float32Array(k * f.height);
  const vt = new Float32Array(k * f.width);
  for (let i = 0; i < k; i++) {
    for (let y = 0; y < f.height; y++) ut[i * f.height + y] = t.U.data[y * t.U.cols + i];
    for (let x = 0; x < f.width; x++) vt[i * f.width + x] = t.V.data[x * t.V.cols + i];
  }
  return { s: t.s.subarray(0, k), ut, vt };
}

/** camera.png and the first k components of its whole-plane factorisation, in the session layout. */
async function cameraFactors(k: number) {
  const img = await decodeImage(image('camera.png'));
  const own = factorPlane(img.planes[0], img.width, img.height, {
    tile: 0,
    meanRemoval: false,
    meanStep: 0,
    maxRank: 40,
  });
  return { img, given: givenPlaneFactors(img.planes[0], img.width, img.height, sessionLayout(own, k)) };
}

describe('given whole-plane factors', () => {
  it('give the same --min-psnr file as factoring inside the encode (camera.png, tile 0)', async () => {
    const img = await decodeImage(image('camera.png'));
    const opts = { budget: { kind: 'psnr' as const, db: 34 }, tile: 0, layers: 'base' as const };
    const plain = encodeScan(img, opts);
    // The encode's own whole-plane settings for this budget: no mean removal, rank max(64, ⌈512/3⌉) = 171.
    const own = factorPlane(img.planes[0], img.width, img.height, {
      tile: 0,
      meanRemoval: false,
      meanStep: 255 / 1020,
      maxRank: 171,
    });
    const k = own.tiles[0].s.length;
    const given = givenPlaneFactors(img.planes[0], img.width, img.height, sessionLayout(own, k));
    const withGiven = encodeScan(img, { ...opts, factors: [given] });
    expect(Buffer.from(withGiven.bytes).equals(Buffer.from(plain.bytes))).toBe(true);
    expect(withGiven.psnr).toBeGreaterThanOrEqual(34);
  });

  it('are used: a rank budget above their components keeps only those', async () => {
    const { img, given } = await cameraFactors(12);
    const r = encodeScan(img, {
      budget: { kind: 'rank', rank: 30 },
      tile: 0,
      layers: 'base',
      factors: [given],
    });
    expect(r.ranks[0].ranks[0]).toBe(12);
  });

  it('stop at once, with advice, when the floor is beyond their truncation error', async () => {
    const { img, given } = await cameraFactors(5);
    // 5 components of camera.png leave far more than the 50 dB error (MSE 0.65 grey levels²).
    expect(() =>
      encodeScan(img, { budget: { kind: 'psnr', db: 50 }, tile: 0, layers: 'base', factors: [given] }),
    ).toThrow(
      /camera\.png: PSNR 50 dB cannot be reached with the 5 components a whole-plane factorisation keeps; use tiles/,
    );
  });

  it('refuse factors of another size or plane count', () => {
    const f = givenPlaneFactors(new Float32Array(12), 4, 3, {
      s: [1],
      ut: new Float32Array(3),
      vt: new Float32Array(4),
    });
    expect(fittingFactors([f], 1, 4, 3)).toEqual([f]);
    expect(() => fittingFactors([f], 3, 4, 3)).toThrow(RangeError);
    expect(() => fittingFactors([f], 1, 3, 4)).toThrow(RangeError);
    expect(() =>
      givenPlaneFactors(new Float32Array(12), 4, 3, {
        s: [1, 0.5],
        ut: new Float32Array(3),
        vt: new Float32Array(4),
      }),
    ).toThrow(RangeError);
    expect(fittingFactors(undefined, 1, 4, 3)).toBeUndefined();
  });
});
