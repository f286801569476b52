// The CLI/app whole-plane path as issue #12 item 3 words it: "q = 2 power iterations, with the accuracy
// check" and "the kernels compiled once per process, with no cold-start penalty inside factorMs"
// (src-main/node/parallel/factor-path.ts, engine/lowrank/factorise.ts). Nothing here is timed: these pin
// the settings and the once-per-process set-up that keep the cost outside the timer.
// Uses the built worker dist/workers/linalg.js for the pool (run `npm run build` first, as `npm test` does).
import { afterAll, describe, expect, it } from 'vitest';
import { reserveOutputs, takeOutput } from '../../src-main/engine/linalg/output-arrays';
import { activeKernels } from '../../src-main/engine/linalg/wasm/runtime';
import {
  factorPlane,
  PLANE_ACCURACY,
  planeSvdOptions,
  setPlaneBackend,
} from '../../src-main/engine/lowrank/factorise';
import { prepareFactorPath } from '../../src-main/node/parallel/factor-path';
import { closeSharedLinalgPool } from '../../src-main/node/parallel/pool';

afterAll(async () => {
  setPlaneBackend(undefined);
  await closeSharedLinalgPool();
});

describe('whole-plane settings (compress --rank 50 --tile 0 of 1500×2000: k = 51 on a short side of 1500)', () => {
  it('f32 SIMD, q = 2 power steps, the 1.01× accuracy check (up to 8 steps), the reuse finish, l = 72', () => {
    const o = planeSvdOptions(51, 1500, { seed: 1, energy: 1 });
    expect(o.precision).toBe('f32');
    expect(o.powerIters).toBe(2);
    expect(o.accuracy).toBe(PLANE_ACCURACY);
    expect(PLANE_ACCURACY).toBe(1.01);
    expect(o.maxPowerIters).toBe(8);
    expect(o.finish).toBe('reuse');
    expect(51 + (o.oversample ?? 0)).toBe(72);
  });
});

describe('prepareFactorPath: once per process, before the timer', () => {
  it('compiles the kernels once: a second call resolves to the same backend without recompiling', async () => {
    const first = await prepareFactorPath();
    const kernels = activeKernels();
    expect(kernels).not.toBeNull();
    const second = await prepareFactorPath({ rows: 300, cols: 400, rank: 50 });
    expect(second).toBe(first);
    expect(activeKernels()).toBe(kernels);
  });

  it("reserves the hinted plane's U and V; a factorisation takes them once, later ones get fresh arrays", async () => {
    const rows = 300;
    const cols = 400;
    await prepareFactorPath({ rows, cols, rank: 50 });
    const plane = Float32Array.from({ length: rows * cols }, (_, i) => Math.sin(i % 97) * 50 + (i % cols));
    const opts = { tile: 0, meanRemoval: false, meanStep: 1, maxRank: 50 };
    const a = factorPlane(plane, cols, rows, opts).tiles[0];
    const b = factorPlane(plane, cols, rows, opts).tiles[0];
    expect(a.U.data).toBeInstanceOf(Float32Array);
    expect(a.U.data.length).toBe(rows * 51);
    // Same input and seed: equal factors, in separate memory.
    expect(Array.from(b.U.data)).toEqual(Array.from(a.U.data));
    expect(Array.from(b.V.data)).toEqual(Array.from(a.V.data));
    expect(b.U.data.buffer).not.toBe(a.U.data.buffer);
    expect(b.V.data.buffer).not.toBe(a.V.data.buffer);
  });

  it('takeOutput hands out each reserved array at most once, zero-filled, and f64 requests never take one', () => {
    reserveOutputs([12, 12, 40]);
    const x = takeOutput(12, true);
    const y = takeOutput(12, true);
    const z = takeOutput(12, true); // none left of this length: a new one
    expect(new Set([x.buffer, y.buffer, z.buffer]).size).toBe(3);
    for (const t of [x, y, z]) {
      expect(t).toBeInstanceOf(Float32Array);
      expect(Array.from(t)).toEqual(new Array(12).fill(0));
    }
    const d = takeOutput(40, false);
    expect(d).toBeInstanceOf(Float64Array);
    expect(d.length).toBe(40);
  });
});
