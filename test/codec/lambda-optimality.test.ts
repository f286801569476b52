// λ-optimality of the two-layer split (issue #12): a brute-force search over (base rank, base quantiser step,
// residual step) on small crops of real fixture images finds no file within the same byte budget that beats
// the solver (src-main/engine/lowrank/two-layer.ts through encodeScan) by more than 0.1 dB.
//
// The grid: a whole-plane (tile 0) base of rank 0–16 at 13 quantiser steps (one grey level × 2^(k/2),
// k = −4…8, the half-octave spacing of the solver's own step grid in ./solve), each with no residual or with a
// residual at one of 97 steps (2^(k/8), k = −16…80: 1/4 to 1024 grey levels, eighth-octave spacing). Every
// candidate is a real file written by the same writer (imageWriter) and its size is taken from those bytes;
// its PSNR is that of round(base + residual) as the decoder rebuilds it. For each base, the residual steps
// are searched by bisection for the smallest one that fits (the coded size falls as the step grows; a file
// that fits at a finer step than the bisection lands on would only widen the brute force's lead), then that
// step and the next coarser one are scored (the PSNR is not strictly monotone in the step).
import { beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { decodeImageLayers } from '../../src-main/engine/codec/image-file';
import { analysePlane, codeAnalysed, reconstructCoded } from '../../src-main/engine/codec/wavelet-plane';
import { roundInto } from '../../src-main/engine/colour';
import { initEngine } from '../../src-main/engine/linalg';
import { buildCandidate, prefixRanks, quantPlanes } from '../../src-main/engine/lowrank/candidate';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { factorPlane } from '../../src-main/engine/lowrank/factorise';
import { imageWriter } from '../../src-main/engine/lowrank/image-writer';
import { tidy } from '../../src-main/engine/lowrank/residual-fit';
import { decodeImage } from '../../src-main/node/image/decode';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { image } from '../helpers/fixtures';

const SIDE = 96;
const MAX_RANK = 16;
const BASE_STEPS = Array.from({ length: 13 }, (_, i) => 2 ** ((i - 4) / 2));
const RESIDUAL_STEPS = Array.from({ length: 97 }, (_, i) => tidy(2 ** ((i - 16) / 8)));
/** The tolerance: nothing better than the solver by more than this. */
const TOLERANCE_DB = 0.1;

beforeAll(async () => {
  await initEngine();
});

/** The SIDE×SIDE crop at (x0, y0) of a gray fixture, without its ICC profile (so headers stay small). */
async function cropOf(name: string, x0: number, y0: number): Promise<DecodedImage> {
  const img = await decodeImage(image(name));
  const src = img.planes[0];
  const plane = new Float32Array(SIDE * SIDE);
  for (let y = 0; y < SIDE; y++)
    plane.set(src.subarray((y0 + y) * img.width + x0, (y0 + y) * img.width + x0 + SIDE), y * SIDE);
  return {
    ...img,
    width: SIDE,
    height: SIDE,
    planes: [plane],
    rawBytes: SIDE * SIDE,
    meta: { ...img.meta, icc: undefined },
  };
}

function psnr8(src: ArrayLike<number>, out: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < src.length; i++) s += (src[i] - out[i]) ** 2;
  return s === 0 ? Number.POSITIVE_INFINITY : 10 * Math.log10((255 * 255 * src.length) / s);
}

interface Best {
  db: number;
  bytes: number;
  what: string;
}

/** Best PSNR over the grid among files of at most `budget` bytes (see the module comment). */
function bruteForce(img: DecodedImage, budget: number): Best {
  const src = img.planes[0];
  const n = src.length;
  const build = imageWriter(
    img,
    { budget: { kind: 'bytes', bytes: budget }, tile: 0, compressors: COMPRESSORS },
    ['gray'],
  );
  const factors = factorPlane(src, SIDE, SIDE, { tile: 0, meanRemoval: false, meanStep: 255 / 1020 });
  const input = [{ factors, weight: 1, stepScale: 1 }];
  let best: Best = { db: Number.NEGATIVE_INFINITY, bytes: 0, what: 'nothing fits' };
  const out = new Uint8Array(n);
  const seen = new Set<string>();
  for (const step of BASE_STEPS) {
    const c = buildCandidate(input, step, { maxRank: MAX_RANK });
    for (let rank = 0; rank <= Math.min(MAX_RANK, c.order.length); rank++) {
      const planes = quantPlanes(input, c, prefixRanks(c, rank));
      const baseFile = build(planes);
      const base = decodeImageLayers(baseFile, 'base.rkf').base[0];
      const key = Buffer.from(baseFile).toString('base64');
      if (seen.has(key)) continue;
      seen.add(key);
      const offer = (db: number, bytes: number, what: string) => {
        if (bytes <= budget && db > best.db) best = { db, bytes, what };
      };
      roundInto(base, n, 255, out, 0);
      offer(psnr8(src, out), baseFile.length, `rank ${rank} at step ${step}, no residual`);
      const analysed = analysePlane(
        Float64Array.from(src, (v, i) => v - base[i]),
        SIDE,
        SIDE,
      );
      const sized = (k: number) => {
        const coded = codeAnalysed(analysed, RESIDUAL_STEPS[k], 2);
        const bytes = build(planes, false, { steps: [RESIDUAL_STEPS[k]], bytes: [coded.bytes] }).length;
        return { coded, bytes, fits: bytes <= budget };
      };
      const score = (k: number, c = sized(k)) => {
        if (!c.fits) return;
        const rec = reconstructCoded(analysed, c.coded);
        const sum = Float64Array.from(base, (v, i) => v + rec[i]);
        roundInto(sum, n, 255, out, 0);
        offer(psnr8(src, out), c.bytes, `rank ${rank} at step ${step}, residual step ${RESIDUAL_STEPS[k]}`);
      };
      // Smallest step index whose file fits: bisection over the grid.
      let lo = 0;
      let hi = RESIDUAL_STEPS.length - 1;
      if (!sized(hi).fits) continue;
      const first = sized(lo);
      if (first.fits) hi = lo;
      while (hi - lo > 1) {
        const mid = (lo + hi) >> 1;
        if (sized(mid).fits) hi = mid;
        else lo = mid;
      }
      score(hi);
      if (hi + 1 < RESIDUAL_STEPS.length) score(hi + 1);
    }
  }
  return best;
}

const CASES = [
  { name: 'camera.png', x0: 208, y0: 96, bpp: [0.5, 1] },
  { name: 'moon.png', x0: 200, y0: 200, bpp: [1] },
  { name: 'text.png', x0: 176, y0: 40, bpp: [2] },
] as const;

describe('λ-optimality of the two-layer split', () => {
  it.each(CASES)(
    '$name, $bpp bpp: no (rank, base step, residual step) file beats the solver by more than 0.1 dB',
    async ({ name, x0, y0, bpp }) => {
      const img = await cropOf(name, x0, y0);
      for (const rate of bpp) {
        const budget = Math.floor((rate * SIDE * SIDE) / 8);
        const solver = encodeScan(img, {
          budget: { kind: 'bytes', bytes: budget },
          tile: 'auto',
          compressors: COMPRESSORS,
          layers: 'auto',
        });
        const brute = bruteForce(img, budget);
        expect(solver.bytes.length).toBeLessThanOrEqual(budget);
        expect(
          brute.db,
          `${name} ${rate} bpp: best found ${brute.what}, ${brute.bytes} B`,
        ).toBeLessThanOrEqual(solver.psnr + TOLERANCE_DB);
      }
    },
    180_000,
  );
});
