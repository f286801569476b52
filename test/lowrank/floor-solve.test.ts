// The quality-floor search (engine/lowrank/floor-solve.ts): solved on the no-refit model, refit once on the
// components it keeps, confirmed on decoded files. Properties, not timings.
import { describe, expect, it } from 'vitest';
import type { QuantPlane } from '../../src-main/engine/codec/quantised';
import { buildCandidate, type PlaneInput } from '../../src-main/engine/lowrank/candidate';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { factorPlane } from '../../src-main/engine/lowrank/factorise';
import { type FloorCheck, solveFloor } from '../../src-main/engine/lowrank/floor-solve';
import { psnrFromSse, psnrPlanes } from '../../src-main/engine/metrics';
import { decodeImage } from '../../src-main/node/image/decode';
import { stageWords } from '../../src-renderer/progress-words';
import { image } from '../helpers/fixtures';

async function grey(name: string, tile: number): Promise<{ inputs: PlaneInput[]; count: number }> {
  const img = await decodeImage(image(name));
  const factors = factorPlane(img.planes[0], img.width, img.height, {
    tile,
    meanRemoval: tile !== 0,
    meanStep: 255 / 1020,
    maxRank: tile === 0 ? 200 : undefined,
  });
  return { inputs: [{ factors, weight: 1, stepScale: 1 }], count: img.width * img.height };
}

/** Target squared error of a PSNR floor over `count` 8-bit samples (PSNR = 10·log10(MAX²/MSE)). */
const targetOf = (db: number, count: number) => count * 255 * 255 * 10 ** (-db / 10);

describe('refit candidates capped per tile', () => {
  it('are exactly the first components of the uncapped refit (a refit sees only earlier components)', async () => {
    const { inputs } = await grey('camera.png', 64);
    const step = 4;
    const full = buildCandidate(inputs, step);
    const caps = [Int32Array.from(full.comps[0], (_, t) => t % 3)];
    const capped = buildCandidate(inputs, step, { caps });
    for (let t = 0; t < full.comps[0].length; t++) {
      const want = full.comps[0][t].slice(0, caps[0][t]);
      expect(capped.comps[0][t].length).toBe(want.length);
      for (let i = 0; i < want.length; i++) {
        expect(capped.comps[0][t][i].qu).toEqual(want[i].qu);
        expect(capped.comps[0][t][i].qv).toEqual(want[i].qv);
        expect(capped.errs[0][t][i]).toBe(full.errs[0][t][i]);
      }
    }
  });

  it('report monotone progress that ends at 1', async () => {
    const { inputs } = await grey('camera.png', 0);
    const seen: number[] = [];
    buildCandidate(inputs, 2, { caps: [Int32Array.of(40)], onProgress: (f) => seen.push(f) });
    expect(seen.length).toBeGreaterThan(10);
    for (let i = 1; i < seen.length; i++) expect(seen[i]).toBeGreaterThanOrEqual(seen[i - 1]);
    expect(seen[seen.length - 1]).toBe(1);
  });
});

describe('solveFloor', () => {
  /** A check that writes and decodes nothing: its error falls with the components kept, plus `extra`. */
  const fakeCheck =
    (count: number, db: number, extra: number, calls: number[]) =>
    (planes: QuantPlane[]): FloorCheck => {
      let ranks = 0;
      for (const t of planes[0].tiles) ranks += t.u.length;
      calls.push(ranks);
      // A stand-in for the decoded error, monotone in the components kept (fewer components, more error).
      const sse = (targetOf(db, count) * 40) / Math.max(1, ranks) + extra;
      return {
        file: new Uint8Array(ranks),
        decoded: undefined as never,
        sse,
        ok: psnrFromSse(sse, count, 255) >= db,
      };
    };

  it('returns only a plan whose check met the floor, stepping up when the first misses', async () => {
    const { inputs, count } = await grey('camera.png', 32);
    const calls: number[] = [];
    const plan = solveFloor(inputs, targetOf(33, count), 255, count, fakeCheck(count, 33, 0, calls));
    expect(plan).toBeDefined();
    expect(plan?.checks).toBe(calls.length);
    expect(calls.length).toBeLessThanOrEqual(4);
    // The returned plan is one that was checked and met the floor.
    const kept = plan?.planes[0].tiles.reduce((s, t) => s + t.u.length, 0) ?? 0;
    expect(calls).toContain(kept);
    expect(psnrFromSse((targetOf(33, count) * 40) / kept, count, 255)).toBeGreaterThanOrEqual(33);
  });

  it('gives up (undefined) when no check ever meets the floor', async () => {
    const { inputs, count } = await grey('camera.png', 32);
    const calls: number[] = [];
    const never = solveFloor(inputs, targetOf(33, count), 255, count, fakeCheck(count, 33, 1e12, calls));
    expect(never).toBeUndefined();
    expect(calls.length).toBeGreaterThan(0);
    expect(calls.length).toBeLessThanOrEqual(4);
  });
});

describe('--min-psnr through encodeScan', () => {
  for (const tile of [0, 32])
    it(`meets the floor on the decoded file with at most 2 real checks on camera.png (tile ${tile})`, async () => {
      const img = await decodeImage(image('camera.png'));
      const stages: string[] = [];
      const r = encodeScan(img, {
        budget: { kind: 'psnr', db: 34 },
        tile,
        layers: 'base',
        onProgress: (s) => stages.push(s),
      });
      const measured = psnrPlanes([img.planes[0]], [r.decoded.samples[0]], 255);
      expect(measured).toBeGreaterThanOrEqual(34);
      expect(r.psnr).toBeCloseTo(measured, 9);
      expect(stages.filter((s) => s === 'measure').length).toBeLessThanOrEqual(2);
      expect(stages).toContain('floor 34 dB');
      // The page shows these stages in words (src-renderer/progress-words.ts).
      expect(stageWords('floor 34 dB')).toBe('finding the smallest file ≥ 34 dB');
      expect(stageWords('measure')).toBe('measuring the result');
    });
});
