// The wavelet plane coder's output is a file format: the speed work on the transform, the quantiser, the
// coefficient coders and the range coder (src-main/engine/codec/) must leave every byte and every decoded
// sample as it was. Digests recorded with the code of commit a30fbfa (before that work) on real images:
// 8-bit grey, 16-bit grey, each channel of a colour image, and an odd-sized plane with partial strips.
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
  analysePlane,
  codeAnalysed,
  codedSquaredError,
  decodePlane,
  quantiseAnalysed,
  smallestSafeStep,
} from '../../src-main/engine/codec/wavelet-plane';
import { decodeImage } from '../../src-main/node/image/decode';
import { image } from '../helpers/fixtures';

const digest = (x: ArrayBufferView) =>
  createHash('sha256')
    .update(new Uint8Array(x.buffer, x.byteOffset, x.byteLength))
    .digest('hex')
    .slice(0, 16);

/** A noisy ramp of odd size: bands of 1–2 samples at the coarsest level and partial column strips. */
function oddPlane(w: number, h: number): Float64Array {
  let s = 12345;
  return Float64Array.from({ length: w * h }, (_, i) => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0; // Numerical Recipes LCG constants
    return (i % w) * 3 - Math.floor(i / w) + (s / 2 ** 32) * 40;
  });
}

/** Digests of everything the coder produces for one plane at one step, space-separated (order below). */
function outputs(plane: ArrayLike<number>, w: number, h: number, step: number): string {
  const a = analysePlane(plane, w, h);
  const c2 = codeAnalysed(a, step, 2);
  const c1 = codeAnalysed(a, step, 1);
  const qa = quantiseAnalysed(a, step);
  const numbers = Float64Array.of(codedSquaredError(a, c2), codedSquaredError(a, qa), smallestSafeStep(a));
  return [
    digest(a.coeffs),
    digest(qa.q),
    digest(qa.offsets as Float64Array),
    digest(c2.bytes),
    digest(decodePlane(c2.bytes, w, h, step, 2)),
    digest(c1.bytes),
    digest(decodePlane(c1.bytes, w, h, step, 1)),
    digest(numbers),
  ].join(' ');
}

async function cases(): Promise<Record<string, string>> {
  const out: Record<string, string> = {};
  const cam = await decodeImage(image('camera.png'));
  for (const step of [2, 7.5]) out[`camera step ${step}`] = outputs(cam.planes[0], 512, 512, step);
  const page = await decodeImage(image('page.png'));
  out['page step 4'] = outputs(page.planes[0], page.width, page.height, 4);
  const u16 = await decodeImage(image('chessboard_GRAY_U16.tif'));
  for (const step of [257 * 3, 257 * 20])
    out[`chessboard 16-bit step ${step}`] = outputs(u16.planes[0], u16.width, u16.height, step);
  const rgb = await decodeImage(image('phantom.png'));
  out['phantom red step 6'] = outputs(rgb.planes[0], rgb.width, rgb.height, 6);
  // A chroma-like plane of signed differences (phantom.png's channels are equal, so its own Cb/Cr are flat).
  const moon = await decodeImage(image('moon.png'));
  const chroma = Float64Array.from(cam.planes[0], (v, i) => (v - moon.planes[0][i]) / 2);
  out['camera − moon chroma step 3'] = outputs(chroma, 512, 512, 3);
  out['odd 37×23 step 3'] = outputs(oddPlane(37, 23), 37, 23, 3);
  return out;
}

describe('wavelet plane coder output', () => {
  it('gives the bytes and decoded planes recorded before the speed work', async () => {
    const got = await cases();
    expect(Object.keys(got)).toEqual(Object.keys(RECORDED));
    for (const [name, d] of Object.entries(got)) expect(d, name).toEqual(RECORDED[name]);
  });
});

// Recorded from commit a30fbfa's src-main/engine/codec (same calls, same fixtures): per case, the digests of
// coeffs, q, offsets, coder2, decoded2, coder1, decoded1, numbers, in that order.
const RECORDED: Record<string, string> = {
  'camera step 2':
    'b88bd34e3b5cbf42 a21dd4dd74810637 d29a25f1e1402f87 2b646fc8583c2a80 9b1237cd2317b32a 151947d105e387e8 d445150042f6ff6c 2bbd0eaafa9903b0',
  'camera step 7.5':
    'b88bd34e3b5cbf42 e5c33c46d260e620 f9dfacd1c69c7d72 444d3fea2fb0f7dd 2f459082b40e492d d703d7e2b1f5832d fc018bc0eedb90cb 72c313306a848884',
  'page step 4':
    'c6715dc41c9e7c44 8c73c0cd9063b126 40de3373500abdad ebe127ff11a696f0 56465e96d3ff790c 39abb907e3481c3a e7a83699627f22fc b8228cd564a9030c',
  'chessboard 16-bit step 771':
    'afad107c38576031 2c01a5926982bbb1 2398873eea7dd0f2 569698f430cf32e9 6f1570ed92b95f41 41bec0c6eabc1cf8 810793307161219c 871020e3992a2f45',
  'chessboard 16-bit step 5140':
    'afad107c38576031 df7269cab6e374d2 a3a2dd9b09979d7b c1c0cf862bd6c327 f4c7cb53af37998f d25952e8f7da0ae0 ad8db67c4b6fb339 d39ea40c5d8f82af',
  'phantom red step 6':
    '63df9ccee64d6ef2 9412c089c3d420a7 4b36667d8adaf2bd 9ecbb1e3fff850a5 ccf05b325ecc1a00 016d6ce18f8e17a9 9c075f8deb9d7207 7dcd1553fd32c8cd',
  'camera − moon chroma step 3':
    '0b55a618087343f6 f3fcf6acd7af79d6 1b74837e798d56f3 dc2a851984ff4617 008089b592ff9401 46f38300ef5b766c 150947b851201f14 5fb6348e9d7402be',
  'odd 37×23 step 3':
    'b50cb78182ea5303 692e2105e35084dd e8e2914d119c7acb ae5aea6038bd69a3 265af1e8dde1309b bb9b70b7908a1b24 254157e09ae97b40 9d7166c9c552805a',
};
